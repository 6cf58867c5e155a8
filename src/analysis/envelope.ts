// The block envelope: largest and smallest |x| per 32-frame chunk of each channel, computed in
// one pass (kernels/envelope.wat) and shared. Most samples are neither near full scale nor near
// silence, so the clipping and silence meters skip whole chunks whose extremes prove nothing can
// happen there,
// the true-peak meter bounds its interpolation with the maxima, and the level meter takes its
// peak from them. Skipping on a proven bound is exact: every reading stays the same.

import type { PcmBlock } from './audio.ts';
import { instantiateKernel } from './kernels/instantiate.ts';
import { KERNEL_MEMORY } from './kernels/memory.ts';
import { WASM_BASE64 } from './kernels/envelope.wasm.ts';

/** Frames per chunk (chunk k covers block frames [32k, 32k + 32)); the last chunk may be shorter. */
export const ENVELOPE_CHUNK_FRAMES = 32;

export interface BlockEnvelope {
  /** Chunks per channel: ceil(frames / ENVELOPE_CHUNK_FRAMES). */
  readonly chunks: number;
  /** Per channel, per chunk: max |x| (Float32 holds |x| of a Float32 sample exactly). */
  readonly maxAbs: readonly Float32Array[];
  /** Per channel, per chunk: min |x|. */
  readonly minAbs: readonly Float32Array[];
  /** Per channel: max |x| of the whole block. */
  readonly blockMaxAbs: Float64Array;
}

/** Frames per kernel call (kernels/envelope.wat); a whole number of chunks. */
const KERNEL_FRAMES = 16384;
const MEMORY = KERNEL_MEMORY.envelope;

interface EnvelopeKernel {
  extremes(frames: number): void;
  input: Float32Array;
  max: Int32Array;
  min: Int32Array;
}

/**
 * The scan is a WebAssembly kernel: with the sign bit cleared, float order is integer order, and
 * integer max/min run four samples per instruction (V8 does not vectorise JavaScript; the same
 * scan in JavaScript measured about four times slower).
 */
function envelopeKernel(): EnvelopeKernel {
  const exports = instantiateKernel<{ extremes: (frames: number) => void }>(WASM_BASE64);
  const buffer = exports.memory.buffer;
  return {
    extremes: exports.extremes,
    input: new Float32Array(buffer, MEMORY.IN, KERNEL_FRAMES),
    max: new Int32Array(buffer, MEMORY.MAX, KERNEL_FRAMES / ENVELOPE_CHUNK_FRAMES),
    min: new Int32Array(buffer, MEMORY.MIN, KERNEL_FRAMES / ENVELOPE_CHUNK_FRAMES),
  };
}

/** Computes envelopes into buffers it reuses across blocks (one per meter or runner). */
export class EnvelopeBuilder {
  private maxBits: Int32Array[] = [];
  private minBits: Int32Array[] = [];
  private maxAbs: Float32Array[] = [];
  private minAbs: Float32Array[] = [];
  private blockMaxAbs = new Float64Array(0);
  /** Made on the first build(): a meter inside the runner is handed the runner's envelope. */
  private kernel: EnvelopeKernel | null = null;

  /** The block's own envelope when the runner attached one, else computed here. */
  of(block: PcmBlock): BlockEnvelope {
    return block.envelope ?? this.build(block);
  }

  build(block: PcmBlock): BlockEnvelope {
    const channels = block.channelData.length;
    const chunks = Math.ceil(block.frames / ENVELOPE_CHUNK_FRAMES);
    if (this.maxBits.length !== channels || this.maxBits[0].length < chunks) this.allocate(channels, chunks);
    const kernel = (this.kernel ??= envelopeKernel());
    for (let c = 0; c < channels; c++) {
      const x = block.channelData[c];
      for (let from = 0; from < block.frames; from += KERNEL_FRAMES) {
        const frames = Math.min(KERNEL_FRAMES, block.frames - from);
        const pieceChunks = Math.ceil(frames / ENVELOPE_CHUNK_FRAMES);
        kernel.input.set(x.subarray(from, from + frames));
        kernel.extremes(frames);
        this.maxBits[c].set(kernel.max.subarray(0, pieceChunks), from / ENVELOPE_CHUNK_FRAMES);
        this.minBits[c].set(kernel.min.subarray(0, pieceChunks), from / ENVELOPE_CHUNK_FRAMES);
      }
      let blockMax = 0;
      const maxAbs = this.maxAbs[c];
      for (let k = 0; k < chunks; k++) if (maxAbs[k] > blockMax) blockMax = maxAbs[k];
      this.blockMaxAbs[c] = blockMax;
    }
    return { chunks, maxAbs: this.maxAbs, minAbs: this.minAbs, blockMaxAbs: this.blockMaxAbs };
  }

  private allocate(channels: number, chunks: number): void {
    const size = Math.max(chunks, this.maxBits[0]?.length ?? 0);
    this.maxBits = Array.from({ length: channels }, () => new Int32Array(size));
    this.minBits = Array.from({ length: channels }, () => new Int32Array(size));
    // Float views of the same memory: the meters compare levels, the scan works on bits.
    this.maxAbs = this.maxBits.map((b) => new Float32Array(b.buffer));
    this.minAbs = this.minBits.map((b) => new Float32Array(b.buffer));
    this.blockMaxAbs = new Float64Array(channels);
  }
}
