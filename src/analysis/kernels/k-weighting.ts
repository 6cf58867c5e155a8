// K-weighting of a block's channels by the WebAssembly kernel in k-weighting.wat: channels go in
// pairs through the two lanes of f64x2, so two channels cost about what one cost as a scalar loop
// (V8 does not vectorise JavaScript). Each lane does the scalar loop's arithmetic in its order,
// so the power equals that loop's to the bit (test/analysis/kernels.test.ts).

import type { Biquad } from '../k-weighting.ts';
import { instantiateKernel } from './instantiate.ts';
import { KERNEL_MEMORY } from './memory.ts';
import { WASM_BASE64 } from './k-weighting.wasm.ts';

/** Frames per kernel call; a block is filtered in pieces of at most this many. */
export const KERNEL_FRAMES = 16384;
const { IN_A, IN_B, POWER, COEF, WINDOW, PAIRS } = KERNEL_MEMORY['k-weighting'];
const PAIR_BYTES = 80;
const PAGE_BYTES = 65536;

/**
 * The two K-weighting biquads (transposed direct form II) rearranged to cost fewer operations per
 * sample; the filter is the same, the rounding differs at the 1e-16 level.
 * - The shelf is divided by its b0: its output y = x + sa needs no multiply, and b0^2 moves into
 *   the channel weight (`b0Squared`).
 * - y is substituted into the shelf's state updates: sa' = (b1/b0 - a1)*x + sb - a1*sa and
 *   sb' = (b2/b0 - a2)*x - a2*sa, so each state's loop-carried chain is one multiply and one subtract.
 * - The high-pass (numerator 1, -2, 1; output z = y + sa) likewise: sa' = (-2 - a1)*y + sb - a1*sa;
 *   sb' = y - a2*z stays as it is, one multiply shorter than substituted.
 */
export interface KWeightingLoop {
  c1: number;
  c2: number;
  a1: number;
  a2: number;
  h1: number;
  ha1: number;
  ha2: number;
  b0Squared: number;
}

export function kWeightingLoop(shelf: Biquad, highpass: Biquad): KWeightingLoop {
  return {
    c1: shelf.b1 / shelf.b0 - shelf.a1,
    c2: shelf.b2 / shelf.b0 - shelf.a2,
    a1: shelf.a1,
    a2: shelf.a2,
    h1: highpass.b1 - highpass.a1,
    ha1: highpass.a1,
    ha2: highpass.a2,
    b0Squared: shelf.b0 * shelf.b0,
  };
}

interface KernelExports {
  memory: WebAssembly.Memory;
  filterPair(frames: number, pair: number, first: number): void;
  slide(
    from: number,
    count: number,
    ring: number,
    sPos: number,
    mPos: number,
    seen: number,
    mFrames: number,
    sFrames: number,
  ): void;
}

/** Filter and sliding-window state for a fixed set of channels; one instance (and its own
 * memory, 400 KB plus the 3 s ring) per meter. */
export class KWeightingKernel {
  private readonly exports: KernelExports;
  private readonly pairs: number;
  private readonly inA: Float32Array;
  private readonly inB: Float32Array;
  private readonly power: Float64Array;

  /** The sliding windows' state: [sum, mSum, sSum, maxM, maxS, maxMEnd, maxSEnd]. */
  readonly window: Float64Array;
  private readonly ringOffset: number;

  /**
   * `weights[i]` is the BS.1770 weight of the i-th channel passed to filter(); `ringFrames` the
   * length of the sliding windows' power history (the 3 s window).
   */
  constructor(loop: KWeightingLoop, weights: readonly number[], ringFrames: number) {
    this.exports = instantiateKernel<KernelExports>(WASM_BASE64);
    this.pairs = Math.ceil(weights.length / 2);
    this.ringOffset = Math.ceil((PAIRS + this.pairs * PAIR_BYTES) / 64) * 64;
    const needed = this.ringOffset + ringFrames * 8;
    const memory = this.exports.memory;
    if (memory.buffer.byteLength < needed) memory.grow(Math.ceil((needed - memory.buffer.byteLength) / PAGE_BYTES));
    const buffer = memory.buffer;
    this.inA = new Float32Array(buffer, IN_A, KERNEL_FRAMES);
    this.inB = new Float32Array(buffer, IN_B, KERNEL_FRAMES);
    this.power = new Float64Array(buffer, POWER, KERNEL_FRAMES);
    this.window = new Float64Array(buffer, WINDOW, 7);
    this.window.set([0, 0, 0, -1, -1, 0, 0]);
    new Float64Array(buffer, COEF, 7).set([loop.c1, loop.c2, loop.a1, loop.a2, loop.h1, loop.ha1, loop.ha2]);
    for (let k = 0; k < this.pairs; k++) {
      const pair = new Float64Array(buffer, PAIRS + k * PAIR_BYTES, PAIR_BYTES / 8);
      // A lone last channel is paired with a silent one of weight 0, which adds exactly +0.
      pair[0] = weights[2 * k] * loop.b0Squared;
      pair[1] = 2 * k + 1 < weights.length ? weights[2 * k + 1] * loop.b0Squared : 0;
    }
  }

  /**
   * The weighted K-filtered power of frames [from, from + frames) of `channels` (one array per
   * weight, in the same order), summed over the channels in that order. frames <= KERNEL_FRAMES.
   * The returned view is valid until the next call.
   */
  filter(channels: readonly Float32Array[], from: number, frames: number): Float64Array {
    if (this.pairs === 0) return this.power.fill(0, 0, frames).subarray(0, frames);
    for (let k = 0; k < this.pairs; k++) {
      this.inA.set(channels[2 * k].subarray(from, from + frames));
      if (2 * k + 1 < channels.length) this.inB.set(channels[2 * k + 1].subarray(from, from + frames));
      else this.inB.fill(0, 0, frames);
      this.exports.filterPair(frames, k, k === 0 ? 1 : 0);
    }
    return this.power.subarray(0, frames);
  }

  /**
   * Slides the windows over power[from, from + count) of the last filter() call: ring positions
   * sPos (write, and what leaves the 3 s window) and mPos (what leaves the 400 ms window) must not
   * wrap within count; `seen` is the frames seen before `from`. Updates `window`.
   */
  slide(from: number, count: number, sPos: number, mPos: number, seen: number, mFrames: number, sFrames: number): void {
    this.exports.slide(from, count, this.ringOffset, sPos, mPos, seen, mFrames, sFrames);
  }
}
