// The reconstructed peak meter's WebAssembly kernel (reconstructed-peak.wat): one call runs the
// chunk loop, a float32 screen, both interpolation stages and the parabola refinement over a
// channel's piece of a block. The exact path's f64x2 lanes hold two neighbouring outputs, each
// computed with the scalar loop's operations in its order, so every reading that can matter
// equals the JavaScript loop's to the bit (test/analysis/kernels.test.ts); V8 does not vectorise
// JavaScript.

import { instantiateKernel } from './instantiate.ts';
import { KERNEL_MEMORY } from './memory.ts';
import { WASM_BASE64 } from './reconstructed-peak.wasm.ts';

/** Frames per call; a whole number of envelope chunks. */
export const RECONSTRUCTION_KERNEL_FRAMES = 16384;
/** Input frames kept before each piece (the .wat's X[0, 36)). */
export const RECONSTRUCTION_HISTORY_FRAMES = 36;
const {
  IN,
  ENV,
  C1,
  C2,
  ST: STATE,
  X,
  OE: RUN_FIRST,
  OL: RUN_LAST,
  ON: RUN_COUNT,
  OP: RUN_PEAK,
  W,
  OV,
} = KERNEL_MEMORY['reconstructed-peak'];

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
  /** Stage 1's 16 taps from the centre out (the screen's float32 copy pairs mirrored samples). */
  halfTaps: Float64Array;
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
  /** After scan(): the runs of overs found, as X indices (the frame is position + index - 36) of
   * their first and last over, their count and largest value. */
  readonly runFirst: Int32Array;
  readonly runLast: Int32Array;
  readonly runCount: Int32Array;
  readonly runPeak: Float64Array;
  /** The open over before scan(), as OverLog holds it: its last frame (-1e300 if none), its
   * largest value (0 if none), and the merge distance + 1 frames. */
  readonly openOver: Float64Array;

  constructor(constants: ReconstructionConstants) {
    const exports = instantiateKernel<KernelExports>(WASM_BASE64);
    this.exports = exports;
    const buffer = exports.memory.buffer;
    this.input = new Float32Array(buffer, IN, RECONSTRUCTION_KERNEL_FRAMES);
    this.chunkMax = new Float32Array(buffer, ENV, RECONSTRUCTION_KERNEL_FRAMES / 32);
    this.state = new Float64Array(buffer, STATE, 11);
    this.history = new Float64Array(buffer, X, RECONSTRUCTION_HISTORY_FRAMES);
    this.runFirst = new Int32Array(buffer, RUN_FIRST, RECONSTRUCTION_KERNEL_FRAMES);
    this.runLast = new Int32Array(buffer, RUN_LAST, RECONSTRUCTION_KERNEL_FRAMES);
    this.runCount = new Int32Array(buffer, RUN_COUNT, RECONSTRUCTION_KERNEL_FRAMES);
    this.runPeak = new Float64Array(buffer, RUN_PEAK, RECONSTRUCTION_KERNEL_FRAMES);
    this.openOver = new Float64Array(buffer, OV, 3);
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
    // The screen's weights, each rounded to float32 and splatted into four lanes.
    const screen = new Float32Array(buffer, W, 4 * 28);
    [...constants.halfTaps, ...constants.s, ...constants.d, ...constants.h].forEach((v, i) =>
      screen.fill(v, 4 * i, 4 * i + 4),
    );
    // The cap rounded up to float32 (the screen's bound on a refined value must not read low).
    const capUp = Float32Array.of(constants.cap);
    if (capUp[0] < constants.cap) new Int32Array(capUp.buffer)[0]++;
    new Float32Array(buffer, OV + 32, 4).fill(capUp[0]);
    const { ceiling, pruneGain, stage2PruneGain, inverseCap } = constants;
    this.state.set([ceiling, pruneGain, stage2PruneGain, inverseCap], 7);
  }

  /** Reads `frames` <= RECONSTRUCTION_KERNEL_FRAMES of input; returns the runs of overs found. */
  scan(frames: number): number {
    return this.exports.scan(frames);
  }
}
