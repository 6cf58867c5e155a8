// The level meter's sums and sums of squares by the WebAssembly kernel in sums.wat (two f64
// lanes per instruction, each lane adding in stream order: the scalar two-lane loop's result).
import { instantiateKernel } from './instantiate.ts';
import { KERNEL_MEMORY } from './memory.ts';
import { WASM_BASE64 } from './sums.wasm.ts';

const MEMORY = KERNEL_MEMORY.sums;

/** Frames per kernel call; even, so a block's even frames stay in lane 0 across calls. */
export const SUMS_KERNEL_FRAMES = 16384;

export class SumsKernel {
  /** Samples of the next call. */
  readonly input: Float32Array;
  /** [sum lane 0, sum lane 1, squares lane 0, squares lane 1], read and written by run(). */
  readonly sums: Float64Array;
  readonly run: (frames: number) => void;

  constructor() {
    const exports = instantiateKernel<{ sums: (frames: number) => void }>(WASM_BASE64);
    this.input = new Float32Array(exports.memory.buffer, MEMORY.IN, SUMS_KERNEL_FRAMES);
    this.sums = new Float64Array(exports.memory.buffer, MEMORY.SUM, 4);
    this.run = exports.sums;
  }
}
