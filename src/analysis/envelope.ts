// The block envelope: largest and smallest |x| per 32-frame chunk of each channel, computed in
// one pass and shared. Most samples are neither near full scale nor near silence, so the
// clipping and silence meters skip whole chunks whose extremes prove nothing can happen there,
// the true-peak meter bounds its interpolation with the maxima, and the level meter takes its
// peak from them. Skipping on a proven bound is exact: every reading stays the same.

import type { PcmBlock } from './audio.ts';

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

/** Computes envelopes into buffers it reuses across blocks (one per meter or runner). */
export class EnvelopeBuilder {
  private maxBits: Int32Array[] = [];
  private minBits: Int32Array[] = [];
  private maxAbs: Float32Array[] = [];
  private minAbs: Float32Array[] = [];
  private blockMaxAbs = new Float64Array(0);

  /** The block's own envelope when the runner attached one, else computed here. */
  of(block: PcmBlock): BlockEnvelope {
    return block.envelope ?? this.build(block);
  }

  build(block: PcmBlock): BlockEnvelope {
    const channels = block.channelData.length;
    const chunks = Math.ceil(block.frames / ENVELOPE_CHUNK_FRAMES);
    if (this.maxBits.length !== channels || this.maxBits[0].length < chunks) this.allocate(channels, chunks);
    for (let c = 0; c < channels; c++) {
      const x = block.channelData[c];
      const bits = new Int32Array(x.buffer, x.byteOffset, block.frames);
      chunkExtremes(bits, block.frames, this.maxBits[c], this.minBits[c]);
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

/**
 * Per-chunk max/min |x| of x[0, frames), on the samples' IEEE-754 bits: with the sign bit
 * cleared, float order is integer order, and an integer max/min can be branch-free
 * (m ^ ((m ^ a) & ((m - a) >> 31))). Branches on random-signed audio mispredict; this runs
 * about twice as fast as Math.max/Math.min or if-statements on the floats. No overflow: both
 * operands are in [0, 2^31).
 */
function chunkExtremes(bits: Int32Array, frames: number, maxOut: Int32Array, minOut: Int32Array): void {
  for (let start = 0, k = 0; start < frames; start += ENVELOPE_CHUNK_FRAMES, k++) {
    const end = Math.min(start + ENVELOPE_CHUNK_FRAMES, frames);
    // Two lanes (even and odd frames) halve the loop-carried chains.
    let hi0 = 0, lo0 = 0x7fffffff, hi1 = 0, lo1 = 0x7fffffff;
    let i = start;
    for (; i + 1 < end; i += 2) {
      const a = bits[i] & 0x7fffffff, b = bits[i + 1] & 0x7fffffff;
      hi0 ^= (hi0 ^ a) & ((hi0 - a) >> 31);
      lo0 ^= (lo0 ^ a) & ((a - lo0) >> 31);
      hi1 ^= (hi1 ^ b) & ((hi1 - b) >> 31);
      lo1 ^= (lo1 ^ b) & ((b - lo1) >> 31);
    }
    if (i < end) {
      const a = bits[i] & 0x7fffffff;
      hi0 ^= (hi0 ^ a) & ((hi0 - a) >> 31);
      lo0 ^= (lo0 ^ a) & ((a - lo0) >> 31);
    }
    maxOut[k] = hi0 ^ ((hi0 ^ hi1) & ((hi0 - hi1) >> 31));
    minOut[k] = lo0 ^ ((lo0 ^ lo1) & ((lo1 - lo0) >> 31));
  }
}
