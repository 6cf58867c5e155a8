// The time-weighted level meter's per-chunk sums by the WebAssembly kernel in ballistics.wat: two
// sequences (lanes A and B) per call, each lane the JavaScript two-frames-a-step loop to the bit.
import { instantiateKernel } from './instantiate.ts';
import { KERNEL_MEMORY } from './memory.ts';
import { WASM_BASE64 } from './ballistics.wasm.ts';

const MEMORY = KERNEL_MEMORY.ballistics;

/** Frames the closed form takes at once (ballistics.ts CHUNK). */
export const BALLISTICS_CHUNK_FRAMES = 64;
/** Frames per lane per kernel call: 256 chunks. */
export const BALLISTICS_KERNEL_FRAMES = 16384;

/** The poles and their products the sums are made of (ballistics.ts). */
export interface BallisticsPoles {
  fast: number;
  fast2: number;
  slow: number;
  slow2: number;
  vu: number;
  vu2: number;
  twoVu2: number;
}

export class BallisticsKernel {
  /** Lane A's and lane B's samples for the next call. */
  readonly laneA: Float32Array;
  readonly laneB: Float32Array;
  /** Per chunk k, per lane l: hf [8k + l], hs [8k + 2 + l], hv [8k + 4 + l], gv [8k + 6 + l]. */
  readonly sums: Float64Array;
  private readonly chunkSums: (chunks: number, ...poles: number[]) => void;

  constructor(private readonly poles: BallisticsPoles) {
    const exports = instantiateKernel<{ chunkSums: (chunks: number, ...poles: number[]) => void }>(WASM_BASE64);
    const buffer = exports.memory.buffer;
    this.laneA = new Float32Array(buffer, MEMORY.A, BALLISTICS_KERNEL_FRAMES);
    this.laneB = new Float32Array(buffer, MEMORY.B, BALLISTICS_KERNEL_FRAMES);
    this.sums = new Float64Array(buffer, MEMORY.OUT, 8 * (BALLISTICS_KERNEL_FRAMES / BALLISTICS_CHUNK_FRAMES));
    this.chunkSums = exports.chunkSums;
  }

  /** Sums of the first `chunks` whole chunks of both lanes. */
  run(chunks: number): void {
    const p = this.poles;
    this.chunkSums(chunks, p.fast, p.fast2, p.slow, p.slow2, p.vu, p.vu2, p.twoVu2);
  }
}
