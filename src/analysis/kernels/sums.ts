// The level meter's sums and sums of squares by the WebAssembly kernel in sums.wat (two f64
// lanes per instruction, each lane adding in stream order: the scalar two-lane loop's result).
import { WASM_BASE64 } from './sums.wasm.ts';

/** Frames per kernel call; even, so a block's even frames stay in lane 0 across calls. */
export const SUMS_KERNEL_FRAMES = 16384;

let compiled: WebAssembly.Module | null = null;
function kernelModule(): WebAssembly.Module {
  compiled ??= new WebAssembly.Module(Uint8Array.from(atob(WASM_BASE64), (c) => c.charCodeAt(0)));
  return compiled;
}

export class SumsKernel {
  /** Samples of the next call. */
  readonly input: Float32Array;
  /** [sum lane 0, sum lane 1, squares lane 0, squares lane 1], read and written by run(). */
  readonly sums: Float64Array;
  readonly run: (frames: number) => void;

  constructor() {
    const exports = new WebAssembly.Instance(kernelModule()).exports as { memory: WebAssembly.Memory; sums: (frames: number) => void };
    this.input = new Float32Array(exports.memory.buffer, 0, SUMS_KERNEL_FRAMES);
    this.sums = new Float64Array(exports.memory.buffer, 65536, 4);
    this.run = exports.sums;
  }
}
