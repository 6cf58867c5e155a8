// Time-weighted levels: exponential RMS Fast/Slow (IEC 61672-1 time constants) and a VU-style reading.
//
// Fast/Slow: one-pole low-pass on x^2, y = a y + (1 - a) x^2, a = exp(-1 / (tau fs)); level 10 log10(y).
// VU: the VU instrument averages the rectified signal and is scaled in sine RMS, so we low-pass |x| with
// a critically damped second-order section (two equal one-poles, tau = 0.3 s / 6.6384) and scale by
// pi / (2 sqrt 2). The step response 1 - (1 + t/tau) e^(-t/tau) reaches 99 % at t = 6.6384 tau = 300 ms.
// The 1-1.5 % overshoot of a mechanical VU is not modelled (no overshoot). A steady sine reads its RMS.
// All meters start at rest (zero) and report the maximum reached over the stream.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { amplitudeToDb, powerToDb } from './units.ts';
import {
  BALLISTICS_CHUNK_FRAMES,
  BALLISTICS_KERNEL_FRAMES,
  BallisticsKernel,
  type BallisticsPoles,
} from './kernels/ballistics.ts';

export const FAST_TIME_CONSTANT_SECONDS = 0.125;
export const SLOW_TIME_CONSTANT_SECONDS = 1;
export const VU_RISE_SECONDS = 0.3;
/** t/tau where 1 - (1 + t/tau) e^(-t/tau) = 0.99. */
const CRITICAL_99_PERCENT_RATIO = 6.638352067993813;
/** Sine RMS over sine rectified mean: (A/sqrt2) / (2A/pi). */
const SINE_FORM_FACTOR = Math.PI / (2 * Math.SQRT2);
/** State (as kept, divided by its input gain) below this is flushed to zero between blocks: keeps
 * Float64 out of slow denormals and is far below any value a nonzero Float32 sample can produce
 * (>= 1e-90), so no reading changes. */
const FLUSH_BELOW = 1e-200;

export interface TimeWeightedLevelOptions {
  fastSeconds?: number;
  slowSeconds?: number;
  /** Time for a sine step to reach 99 % of its final VU deflection. */
  vuRiseSeconds?: number;
}

export interface ChannelTimeWeightedLevels {
  channel: number;
  maxFastDbfs: number | null;
  maxSlowDbfs: number | null;
  /** Sine-RMS-calibrated rectified average; full-scale sine reads -3.01 like RMS. */
  maxVuDbfs: number | null;
}

export interface TimeWeightedLevelResult {
  fastSeconds: number;
  slowSeconds: number;
  vuRiseSeconds: number;
  channels: ChannelTimeWeightedLevels[];
}

export interface CurrentTimeWeightedLevels {
  fastDbfs: number | null;
  slowDbfs: number | null;
  vuDbfs: number | null;
}

/**
 * How push() runs, exactly but mostly without the per-sample recurrences (whose multiply-add chains
 * bound the speed of the straightforward loop; that loop is kept in test/helpers/reference-meters).
 *
 * State is kept divided by its input gain (fast / bf, slow / bs, vu1 / bv, vu2 / bv^2), so each
 * stage is y = a y + u, with u = x^2 or |x| for the first stages and u = vu1 for the VU's second.
 * Over a chunk of N samples u_0..u_{N-1} (j counts from 0) the end state has a closed form:
 *   y_N   = a^N y_0 + h,              h = sum_j a^(N-1-j) u_j
 *   vu2_N = a^N vu2_0 + N a^N vu1_0 + g,   g = sum_j (N-j) a^(N-1-j) |x_j|
 * h and g are evaluated two samples a step (Horner in a^2), so their dependency chains are half as
 * long as the recurrence's, by a WebAssembly kernel (kernels/ballistics.wat) that does two channels
 * at once with the same operations in the same order. Because u >= 0 and a^(N-1-j) <= 1, no state inside the chunk can exceed
 *   y_n <= y_0 + sum_j u_j <= y_0 + h / a^(N-1)                       (Fast, Slow, vu1: call it B)
 *   vu2_n = a^n vu2_0 + sum_k a^(n-k) vu1_k <= vu2_0 + (1 - a^N) max(0, B / (1 - a) - vu2_0).
 * When none of these bounds passes its running maximum, no sample of the chunk sets a new maximum
 * and the closed form gives the end state. Otherwise, and for a block's last partial chunk, the
 * chunk runs sample by sample. The closed form adds nonnegative terms, so it agrees with the
 * per-sample recurrence to a few dozen ulps, and SLACK covers the rounding of h in the bounds.
 */
const CHUNK = BALLISTICS_CHUNK_FRAMES;
const SLACK = 1 + 1e-12;

export class TimeWeightedLevelMeter implements Meter<TimeWeightedLevelResult> {
  // Input gains b and pole a = 1 - b of the three one-poles (the VU's two stages share theirs).
  private readonly fastGain: number;
  private readonly slowGain: number;
  private readonly vuGain: number;
  private readonly fastPole: number;
  private readonly slowPole: number;
  private readonly vuPole: number;
  private readonly fastSeconds: number;
  private readonly slowSeconds: number;
  private readonly vuRiseSeconds: number;
  // Per channel, divided by the input gain (see above): state and running maxima.
  private readonly fast: Float64Array;
  private readonly slow: Float64Array;
  private readonly vu1: Float64Array;
  private readonly vu2: Float64Array;
  private readonly maxFast: Float64Array;
  private readonly maxSlow: Float64Array;
  private readonly maxVu: Float64Array;
  private readonly poles: BallisticsPoles;
  private readonly closedForm: {
    afN: number;
    asN: number;
    avN: number;
    nAvN: number;
    fastGrowth: number;
    slowGrowth: number;
    vuGrowth: number;
    vuSteady: number;
    vuRise: number;
  };
  /** Made on the first push (a runner thread that never gets this meter makes none). */
  private kernel: BallisticsKernel | null = null;

  constructor(
    private readonly info: StreamInfo,
    options: TimeWeightedLevelOptions = {},
  ) {
    const fs = info.sampleRate;
    this.fastSeconds = options.fastSeconds ?? FAST_TIME_CONSTANT_SECONDS;
    this.slowSeconds = options.slowSeconds ?? SLOW_TIME_CONSTANT_SECONDS;
    this.vuRiseSeconds = options.vuRiseSeconds ?? VU_RISE_SECONDS;
    this.fastGain = 1 - Math.exp(-1 / (this.fastSeconds * fs));
    this.slowGain = 1 - Math.exp(-1 / (this.slowSeconds * fs));
    this.vuGain = 1 - Math.exp(-1 / ((this.vuRiseSeconds / CRITICAL_99_PERCENT_RATIO) * fs));
    this.fastPole = 1 - this.fastGain;
    this.slowPole = 1 - this.slowGain;
    this.vuPole = 1 - this.vuGain;
    const af = this.fastPole,
      as = this.slowPole,
      av = this.vuPole;
    this.poles = { fast: af, fast2: af * af, slow: as, slow2: as * as, vu: av, vu2: av * av, twoVu2: 2 * (av * av) };
    this.closedForm = {
      afN: af ** CHUNK,
      asN: as ** CHUNK,
      avN: av ** CHUNK,
      nAvN: CHUNK * av ** CHUNK,
      fastGrowth: SLACK / af ** (CHUNK - 1),
      slowGrowth: SLACK / as ** (CHUNK - 1),
      vuGrowth: SLACK / av ** (CHUNK - 1),
      vuSteady: 1 / (1 - av),
      vuRise: 1 - av ** CHUNK,
    };
    const n = info.channels;
    this.fast = new Float64Array(n);
    this.slow = new Float64Array(n);
    this.vu1 = new Float64Array(n);
    this.vu2 = new Float64Array(n);
    this.maxFast = new Float64Array(n);
    this.maxSlow = new Float64Array(n);
    this.maxVu = new Float64Array(n);
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    const whole = frames - (frames % CHUNK);
    const kernel = (this.kernel ??= new BallisticsKernel(this.poles));
    const channels = this.info.channels;
    for (let c = 0; c < channels; c += 2) {
      const a = block.channelData[c];
      if (c + 1 < channels) {
        // A channel pair: one channel per lane.
        const b = block.channelData[c + 1];
        for (let from = 0; from < whole; from += BALLISTICS_KERNEL_FRAMES) {
          const n = Math.min(BALLISTICS_KERNEL_FRAMES, whole - from);
          kernel.laneA.set(a.subarray(from, from + n));
          kernel.laneB.set(b.subarray(from, from + n));
          kernel.run(n / CHUNK);
          this.chunks(c, a, from, n / CHUNK, 0);
          this.chunks(c + 1, b, from, n / CHUNK, 1);
        }
      } else {
        // A lone channel: the two halves of each piece in the two lanes.
        for (let from = 0; from < whole; from += 2 * BALLISTICS_KERNEL_FRAMES) {
          const chunks = Math.min(2 * BALLISTICS_KERNEL_FRAMES, whole - from) / CHUNK;
          const first = Math.ceil(chunks / 2),
            middle = from + first * CHUNK;
          kernel.laneA.set(a.subarray(from, middle));
          kernel.laneB.set(a.subarray(middle, from + chunks * CHUNK));
          kernel.run(first); // lane B may hold one stale chunk at the end; its sums are not read
          this.chunks(c, a, from, first, 0);
          this.chunks(c, a, middle, chunks - first, 1);
        }
      }
    }
    for (let c = 0; c < channels; c++) {
      if (whole < frames) this.samples(c, block.channelData[c], whole, frames);
      this.flush(c);
    }
  }

  /**
   * `chunks` whole chunks of channel c from frame `from`, with their sums in kernel lane `lane`:
   * the bounds above, then the end state in closed form or, where a maximum may rise, per sample.
   */
  private chunks(c: number, x: Float32Array, from: number, chunks: number, lane: number): void {
    const sums = this.kernel!.sums;
    const { afN, asN, avN, nAvN, fastGrowth, slowGrowth, vuGrowth, vuSteady, vuRise } = this.closedForm;
    let fast = this.fast[c],
      slow = this.slow[c],
      vu1 = this.vu1[c],
      vu2 = this.vu2[c];
    let maxFast = this.maxFast[c],
      maxSlow = this.maxSlow[c],
      maxVu = this.maxVu[c];
    for (let k = 0; k < chunks; k++) {
      const o = 8 * k + lane;
      const hf = sums[o],
        hs = sums[o + 2],
        hv = sums[o + 4],
        gv = sums[o + 6];
      const vu1Bound = vu1 + hv * vuGrowth;
      const vu2Excess = vu1Bound * vuSteady - vu2;
      if (
        fast + hf * fastGrowth <= maxFast &&
        slow + hs * slowGrowth <= maxSlow &&
        vu2 + (vu2Excess > 0 ? vuRise * vu2Excess : 0) <= maxVu
      ) {
        fast = afN * fast + hf;
        slow = asN * slow + hs;
        vu2 = avN * vu2 + nAvN * vu1 + gv;
        vu1 = avN * vu1 + hv;
        continue;
      }
      this.save(c, fast, slow, vu1, vu2, maxFast, maxSlow, maxVu);
      this.samples(c, x, from + k * CHUNK, from + (k + 1) * CHUNK);
      fast = this.fast[c];
      slow = this.slow[c];
      vu1 = this.vu1[c];
      vu2 = this.vu2[c];
      maxFast = this.maxFast[c];
      maxSlow = this.maxSlow[c];
      maxVu = this.maxVu[c];
    }
    this.save(c, fast, slow, vu1, vu2, maxFast, maxSlow, maxVu);
  }

  /** Frames [from, to) of channel c by the recurrences themselves. */
  private samples(c: number, x: Float32Array, from: number, to: number): void {
    const af = this.fastPole,
      as = this.slowPole,
      av = this.vuPole;
    let fast = this.fast[c],
      slow = this.slow[c],
      vu1 = this.vu1[c],
      vu2 = this.vu2[c];
    let maxFast = this.maxFast[c],
      maxSlow = this.maxSlow[c],
      maxVu = this.maxVu[c];
    for (let i = from; i < to; i++) {
      const v = x[i];
      const sq = v * v;
      fast = af * fast + sq;
      slow = as * slow + sq;
      vu1 = av * vu1 + Math.abs(v);
      vu2 = av * vu2 + vu1;
      // New maxima are rare after the first moments, so these predict well.
      if (fast > maxFast) maxFast = fast;
      if (slow > maxSlow) maxSlow = slow;
      if (vu2 > maxVu) maxVu = vu2;
    }
    this.save(c, fast, slow, vu1, vu2, maxFast, maxSlow, maxVu);
  }

  private save(
    c: number,
    fast: number,
    slow: number,
    vu1: number,
    vu2: number,
    maxFast: number,
    maxSlow: number,
    maxVu: number,
  ): void {
    this.fast[c] = fast;
    this.slow[c] = slow;
    this.vu1[c] = vu1;
    this.vu2[c] = vu2;
    this.maxFast[c] = maxFast;
    this.maxSlow[c] = maxSlow;
    this.maxVu[c] = maxVu;
  }

  /** At each block's end: state decayed below FLUSH_BELOW becomes zero. */
  private flush(c: number): void {
    if (this.fast[c] < FLUSH_BELOW) this.fast[c] = 0;
    if (this.slow[c] < FLUSH_BELOW) this.slow[c] = 0;
    if (this.vu1[c] < FLUSH_BELOW) this.vu1[c] = 0;
    if (this.vu2[c] < FLUSH_BELOW) this.vu2[c] = 0;
  }

  /** Readings at the end of the last pushed block (for live display and tests of the ballistics). */
  current(channel: number): CurrentTimeWeightedLevels {
    return {
      fastDbfs: levelOf(powerToDb(this.fastGain * this.fast[channel])),
      slowDbfs: levelOf(powerToDb(this.slowGain * this.slow[channel])),
      vuDbfs: levelOf(amplitudeToDb(this.vuGain * this.vuGain * this.vu2[channel] * SINE_FORM_FACTOR)),
    };
  }

  result(): TimeWeightedLevelResult {
    const channels: ChannelTimeWeightedLevels[] = [];
    for (let c = 0; c < this.info.channels; c++) {
      channels.push({
        channel: c,
        maxFastDbfs: powerToDb(this.fastGain * this.maxFast[c]),
        maxSlowDbfs: powerToDb(this.slowGain * this.maxSlow[c]),
        maxVuDbfs: amplitudeToDb(this.vuGain * this.vuGain * this.maxVu[c] * SINE_FORM_FACTOR),
      });
    }
    return {
      fastSeconds: this.fastSeconds,
      slowSeconds: this.slowSeconds,
      vuRiseSeconds: this.vuRiseSeconds,
      channels,
    };
  }
}

/** Decayed-to-nothing state reads as silence, whichever side of the flush it is on. */
function levelOf(db: number | null): number | null {
  return db === null || db < -1000 ? null : db;
}
