// The first channel pair's window sums (a*a, b*b, a*b) by the WebAssembly kernel in
// pair-sums.wat: the scalar loop's sums to the bit, the squares two per instruction.
import { instantiateKernel } from './instantiate.ts';
import { KERNEL_MEMORY } from './memory.ts';
import { WASM_BASE64 } from './pair-sums.wasm.ts';

const MEMORY = KERNEL_MEMORY['pair-sums'];

/** Frames per kernel call. */
export const PAIR_SUMS_FRAMES = 16384;

export class PairSumsKernel {
  private readonly a: Float32Array;
  private readonly b: Float32Array;
  /** [aa, bb, ab]: set before, read after add(). */
  readonly sums: Float64Array;
  private readonly run: (frames: number) => void;

  constructor() {
    const exports = instantiateKernel<{ pairSums: (frames: number) => void }>(WASM_BASE64);
    this.a = new Float32Array(exports.memory.buffer, MEMORY.A, PAIR_SUMS_FRAMES);
    this.b = new Float32Array(exports.memory.buffer, MEMORY.B, PAIR_SUMS_FRAMES);
    this.sums = new Float64Array(exports.memory.buffer, MEMORY.SQUARES, 3);
    this.run = exports.pairSums;
  }

  /** Adds frames [from, to) of the two channels to `sums`. */
  add(xa: Float32Array, xb: Float32Array, from: number, to: number): void {
    for (let start = from; start < to; start += PAIR_SUMS_FRAMES) {
      const end = Math.min(to, start + PAIR_SUMS_FRAMES);
      this.a.set(xa.subarray(start, end));
      this.b.set(xb.subarray(start, end));
      this.run(end - start);
    }
  }
}
