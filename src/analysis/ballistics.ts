// Time-weighted levels: exponential RMS Fast/Slow (IEC 61672-1 time constants) and a VU-style reading.
//
// Fast/Slow: one-pole low-pass on x^2, y = a y + (1 - a) x^2, a = exp(-1 / (tau fs)); level 10 log10(y).
// VU: the VU instrument averages the rectified signal and is scaled in sine RMS, so we low-pass |x| with
// a critically damped second-order section (two equal one-poles, tau = 0.3 s / 6.6384) and scale by
// pi / (2 sqrt 2). The step response 1 - (1 + t/tau) e^(-t/tau) reaches 99 % at t = 6.6384 tau = 300 ms.
// The 1-1.5 % overshoot of a mechanical VU is not modelled (no overshoot). A steady sine reads its RMS.
// All meters start at rest (zero) and report the maximum reached over the stream.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { amplitudeToDb, powerToDb } from './levels.ts';

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
 * long as the recurrence's. Because u >= 0 and a^(N-1-j) <= 1, no state inside the chunk can exceed
 *   y_n <= y_0 + sum_j u_j <= y_0 + h / a^(N-1)                       (Fast, Slow, vu1: call it B)
 *   vu2_n = a^n vu2_0 + sum_k a^(n-k) vu1_k <= vu2_0 + (1 - a^N) max(0, B / (1 - a) - vu2_0).
 * When none of these bounds passes its running maximum, no sample of the chunk sets a new maximum
 * and the closed form gives the end state. Otherwise, and for a block's last partial chunk, the
 * chunk runs sample by sample. The closed form adds nonnegative terms, so it agrees with the
 * per-sample recurrence to a few dozen ulps, and SLACK covers the rounding of h in the bounds.
 */
const CHUNK = 64;
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

  constructor(private readonly info: StreamInfo, options: TimeWeightedLevelOptions = {}) {
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
    const af = this.fastPole, as = this.slowPole, av = this.vuPole;
    const af2 = af * af, as2 = as * as, av2 = av * av, twoAv2 = 2 * av2;
    const afN = af ** CHUNK, asN = as ** CHUNK, avN = av ** CHUNK, nAvN = CHUNK * avN;
    const fastGrowth = SLACK / af ** (CHUNK - 1), slowGrowth = SLACK / as ** (CHUNK - 1), vuGrowth = SLACK / av ** (CHUNK - 1);
    const vuSteady = 1 / (1 - av), vuRise = 1 - avN;
    for (let c = 0; c < this.info.channels; c++) {
      const x = block.channelData[c];
      let fast = this.fast[c], slow = this.slow[c], vu1 = this.vu1[c], vu2 = this.vu2[c];
      let maxFast = this.maxFast[c], maxSlow = this.maxSlow[c], maxVu = this.maxVu[c];
      for (let i = 0; i < frames;) {
        const end = i + CHUNK;
        if (end <= frames) {
          let hf = 0, hs = 0, hv = 0, gv = 0;
          for (let j = i; j < end; j += 2) {
            const x0 = x[j], x1 = x[j + 1];
            const q0 = x0 * x0, q1 = x1 * x1;
            const r0 = Math.abs(x0), r1 = Math.abs(x1);
            hf = af2 * hf + (af * q0 + q1);
            hs = as2 * hs + (as * q0 + q1);
            const ar0 = av * r0, p = ar0 + r1;
            gv = av2 * gv + (twoAv2 * hv + (ar0 + p));
            hv = av2 * hv + p;
          }
          // The bounds above; a chunk that cannot set a new maximum jumps to its end state.
          const vu1Bound = vu1 + hv * vuGrowth;
          const vu2Excess = vu1Bound * vuSteady - vu2;
          if (fast + hf * fastGrowth <= maxFast && slow + hs * slowGrowth <= maxSlow
            && vu2 + (vu2Excess > 0 ? vuRise * vu2Excess : 0) <= maxVu) {
            fast = afN * fast + hf;
            slow = asN * slow + hs;
            vu2 = avN * vu2 + nAvN * vu1 + gv;
            vu1 = avN * vu1 + hv;
            i = end;
            continue;
          }
        }
        const stop = end < frames ? end : frames;
        for (; i < stop; i++) {
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
      }
      this.store(c, fast, slow, vu1, vu2, maxFast, maxSlow, maxVu);
    }
  }

  private store(c: number, fast: number, slow: number, vu1: number, vu2: number, maxFast: number, maxSlow: number, maxVu: number): void {
    this.fast[c] = fast < FLUSH_BELOW ? 0 : fast;
    this.slow[c] = slow < FLUSH_BELOW ? 0 : slow;
    this.vu1[c] = vu1 < FLUSH_BELOW ? 0 : vu1;
    this.vu2[c] = vu2 < FLUSH_BELOW ? 0 : vu2;
    this.maxFast[c] = maxFast;
    this.maxSlow[c] = maxSlow;
    this.maxVu[c] = maxVu;
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
