// The Annex 2 true peak meter's WebAssembly kernel (true-peak.wat): one call runs the chunk loop
// and the 4x interpolation over a channel's piece of a block.
// A float32 pass, four frames a vector, screens out the frames that provably cannot beat the gate;
// the others are computed with the scalar float64 arithmetic in its order, so every reading is
// the scalar loop's to the bit (test/analysis/true-peak.test.ts). V8 does not vectorise JavaScript.

import { instantiateKernel } from './instantiate.ts';
import { KERNEL_MEMORY } from './memory.ts';
import { WASM_BASE64 } from './true-peak.wasm.ts';

/** Frames per call; a whole number of envelope chunks. */
export const TRUE_PEAK_KERNEL_FRAMES = 16384;
/** Samples before each piece that its first frames' taps reach (the .wat's IN[0, 11)). */
export const TRUE_PEAK_HISTORY_FRAMES = 11;
const { IN, ENV, C, W, ST: STATE, OE: RUN_FIRST, OL: RUN_LAST, OP: RUN_PEAKS } = KERNEL_MEMORY['true-peak'];

/** The state slots, in the .wat's order. */
export const TRUE_PEAK_SLOT = {
  maximum: 0,
  maximumFrame: 1,
  historyMax: 2,
  pruned: 3,
  position: 4,
  ceiling: 5,
  gainBound: 6,
  extendRuns: 7,
} as const;

export interface TruePeakConstants {
  /** Halved pair sums and differences of phase 0 and phase 1, 6 each. */
  s0: Float64Array;
  d0: Float64Array;
  s1: Float64Array;
  d1: Float64Array;
  ceiling: number;
  gainBound: number;
  /** Whether overs at consecutive frames may form one run (the over log merges them). */
  extendRuns: boolean;
}

interface KernelExports {
  scan(frames: number): number;
}

export class TruePeakKernel {
  private readonly exports: KernelExports;
  /** The history samples, then the piece (written before scan()). */
  readonly input: Float32Array;
  /** The piece's chunk maxima (envelope.ts). */
  readonly chunkMax: Float32Array;
  readonly state: Float64Array;
  /** After scan(): the runs of overs (consecutive frames) found: first and last frame of the piece, largest value. */
  readonly runFirst: Int32Array;
  readonly runLast: Int32Array;
  readonly runPeaks: Float64Array;

  constructor(constants: TruePeakConstants) {
    const exports = instantiateKernel<KernelExports>(WASM_BASE64);
    this.exports = exports;
    const buffer = exports.memory.buffer;
    this.input = new Float32Array(buffer, IN, TRUE_PEAK_HISTORY_FRAMES + TRUE_PEAK_KERNEL_FRAMES + 3);
    this.chunkMax = new Float32Array(buffer, ENV, TRUE_PEAK_KERNEL_FRAMES / 32);
    this.state = new Float64Array(buffer, STATE, 8);
    this.runFirst = new Int32Array(buffer, RUN_FIRST, TRUE_PEAK_KERNEL_FRAMES);
    this.runLast = new Int32Array(buffer, RUN_LAST, TRUE_PEAK_KERNEL_FRAMES);
    this.runPeaks = new Float64Array(buffer, RUN_PEAKS, TRUE_PEAK_KERNEL_FRAMES);
    // Each weight splatted: float64 for the exact arithmetic, float32 for the screening pass (exact
    // there too: the weights are multiples of 2^-17 below 1).
    const weights = new Float64Array(buffer, C, 48),
      screening = new Float32Array(buffer, W, 96);
    [constants.s0, constants.d0, constants.s1, constants.d1].forEach((values, set) =>
      values.forEach((v, i) => {
        if (Math.fround(v) !== v) throw new Error('a true-peak weight is not exact in float32');
        weights.fill(v, 12 * set + 2 * i, 12 * set + 2 * i + 2);
        screening.fill(v, 24 * set + 4 * i, 24 * set + 4 * i + 4);
      }),
    );
    this.state[TRUE_PEAK_SLOT.ceiling] = constants.ceiling;
    this.state[TRUE_PEAK_SLOT.gainBound] = constants.gainBound;
    this.state[TRUE_PEAK_SLOT.extendRuns] = constants.extendRuns ? 1 : 0;
  }

  /** Reads `frames` <= TRUE_PEAK_KERNEL_FRAMES of input; returns the runs of overs found. */
  scan(frames: number): number {
    return this.exports.scan(frames);
  }
}
