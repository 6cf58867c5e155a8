// The reconstructed peak meter's WebAssembly kernel (reconstructed-peak.wat): one call runs the
// chunk loop, both interpolation stages and the parabola refinement over a channel's piece of a
// block. f64x2 lanes hold two neighbouring outputs, each computed with the scalar loop's
// operations in its order, so every grid value and reading equals the JavaScript loop's to the bit
// (test/analysis/kernels.test.ts); V8 does not vectorise JavaScript.

import { instantiateKernel } from './instantiate.ts';
import { KERNEL_MEMORY } from './memory.ts';
import { WASM_BASE64 } from './reconstructed-peak.wasm.ts';

/** Frames per call; a whole number of envelope chunks. */
export const RECONSTRUCTION_KERNEL_FRAMES = 16384;
/** Input frames kept before each piece (the .wat's X[0, 36)). */
export const RECONSTRUCTION_HISTORY_FRAMES = 36;
const { IN, ENV, C1, C2, ST: STATE, X, OE: OVER_FRAMES, OP: OVER_PEAKS } = KERNEL_MEMORY['reconstructed-peak'];

/** The state slots one channel carries between calls, in the .wat's order. */
export const CHANNEL_SLOTS = 5;
export const SLOT = {
  maximum: 0,
  maximumFrame: 1,
  gate: 2,
  samplePeak: 3,
  historyMax: 4,
  pruned: 5,
  position: 6,
  ceiling: 7,
} as const;

export interface ReconstructionConstants {
  /** Stage 1's 32 taps in input order, x[m - 15] .. x[m + 16]. */
  stage1: Float64Array;
  /** Stage 2's halved pair sums and differences (phases 1/4 and 3/4) and phase 1/2, 4 each. */
  s: Float64Array;
  d: Float64Array;
  h: Float64Array;
  ceiling: number;
  pruneGain: number;
  stage2PruneGain: number;
  inverseCap: number;
  cap: number;
}

interface KernelExports {
  scan(frames: number): number;
}

export class ReconstructionKernel {
  private readonly exports: KernelExports;
  /** The piece's samples and its chunk maxima (envelope.ts), written before scan(). */
  readonly input: Float32Array;
  readonly chunkMax: Float32Array;
  /** The current channel's slots (CHANNEL_SLOTS of them), then the pruned count and the piece's position. */
  readonly state: Float64Array;
  /** The history before the piece on entry, before the next piece on return. */
  readonly history: Float64Array;
  /** After scan(): the overs found, as X indices (the frame is position + index - 36) and values. */
  readonly overIndices: Int32Array;
  readonly overPeaks: Float64Array;

  constructor(constants: ReconstructionConstants) {
    const exports = instantiateKernel<KernelExports>(WASM_BASE64);
    this.exports = exports;
    const buffer = exports.memory.buffer;
    this.input = new Float32Array(buffer, IN, RECONSTRUCTION_KERNEL_FRAMES);
    this.chunkMax = new Float32Array(buffer, ENV, RECONSTRUCTION_KERNEL_FRAMES / 32);
    this.state = new Float64Array(buffer, STATE, 11);
    this.history = new Float64Array(buffer, X, RECONSTRUCTION_HISTORY_FRAMES);
    this.overIndices = new Int32Array(buffer, OVER_FRAMES, RECONSTRUCTION_KERNEL_FRAMES);
    this.overPeaks = new Float64Array(buffer, OVER_PEAKS, RECONSTRUCTION_KERNEL_FRAMES);
    // Each weight splatted into both lanes.
    const splat = (at: number, values: Float64Array) => {
      const view = new Float64Array(buffer, at, 2 * values.length);
      values.forEach((v, i) => {
        view[2 * i] = v;
        view[2 * i + 1] = v;
      });
    };
    splat(C1, constants.stage1);
    splat(C2, constants.s);
    splat(C2 + 64, constants.d);
    splat(C2 + 128, constants.h);
    splat(C2 + 192, Float64Array.of(constants.cap));
    const { ceiling, pruneGain, stage2PruneGain, inverseCap } = constants;
    this.state.set([ceiling, pruneGain, stage2PruneGain, inverseCap], 7);
  }

  /** Reads `frames` <= RECONSTRUCTION_KERNEL_FRAMES of input; returns the overs found. */
  scan(frames: number): number {
    return this.exports.scan(frames);
  }
}
