// Reference kept for equivalence tests: the straightforward per-sample TimeWeightedLevelMeter that
// src/analysis/ballistics.ts replaced, unchanged but for its imports.
// test/analysis/ballistics-equivalence.test.ts checks the optimised meter against it.
//
// Time-weighted levels: exponential RMS Fast/Slow (IEC 61672-1 time constants) and a VU-style reading.
//
// Fast/Slow: one-pole low-pass on x^2, y = a y + (1 - a) x^2, a = exp(-1 / (tau fs)); level 10 log10(y).
// VU: the VU instrument averages the rectified signal and is scaled in sine RMS, so we low-pass |x| with
// a critically damped second-order section (two equal one-poles, tau = 0.3 s / 6.6384) and scale by
// pi / (2 sqrt 2). The step response 1 - (1 + t/tau) e^(-t/tau) reaches 99 % at t = 6.6384 tau = 300 ms.
// The 1-1.5 % overshoot of a mechanical VU is not modelled (no overshoot). A steady sine reads its RMS.
// All meters start at rest (zero) and report the maximum reached over the stream.

import type { Meter, PcmBlock, StreamInfo } from '../../../src/analysis/audio.ts';
import { amplitudeToDb, powerToDb } from '../../../src/analysis/levels.ts';

export const FAST_TIME_CONSTANT_SECONDS = 0.125;
export const SLOW_TIME_CONSTANT_SECONDS = 1;
export const VU_RISE_SECONDS = 0.3;
/** t/tau where 1 - (1 + t/tau) e^(-t/tau) = 0.99. */
const CRITICAL_99_PERCENT_RATIO = 6.638352067993813;
/** Sine RMS over sine rectified mean: (A/sqrt2) / (2A/pi). */
const SINE_FORM_FACTOR = Math.PI / (2 * Math.SQRT2);
/** State below this is flushed to zero between blocks: keeps Float64 out of slow denormals and is
 * far below any value a nonzero Float32 sample can produce (>= 1e-90), so no reading changes. */
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

export class TimeWeightedLevelMeter implements Meter<TimeWeightedLevelResult> {
  private readonly fastCoef: number;
  private readonly slowCoef: number;
  private readonly vuCoef: number;
  private readonly fastSeconds: number;
  private readonly slowSeconds: number;
  private readonly vuRiseSeconds: number;
  // Per channel: [fast, slow, vu1, vu2] state and running maxima.
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
    // Stored as b = 1 - a; the loop uses y = a y + b x.
    this.fastCoef = 1 - Math.exp(-1 / (this.fastSeconds * fs));
    this.slowCoef = 1 - Math.exp(-1 / (this.slowSeconds * fs));
    this.vuCoef = 1 - Math.exp(-1 / ((this.vuRiseSeconds / CRITICAL_99_PERCENT_RATIO) * fs));
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
    const bf = this.fastCoef, af = 1 - bf;
    const bs = this.slowCoef, as = 1 - bs;
    const bv = this.vuCoef, av = 1 - bv;
    for (let c = 0; c < this.info.channels; c++) {
      const x = block.channelData[c];
      let fast = this.fast[c], slow = this.slow[c], vu1 = this.vu1[c], vu2 = this.vu2[c];
      let maxFast = this.maxFast[c], maxSlow = this.maxSlow[c], maxVu = this.maxVu[c];
      for (let i = 0; i < frames; i++) {
        const v = x[i];
        const sq = v * v;
        // a y + b x keeps each loop-carried chain at one multiply and one add.
        fast = af * fast + bf * sq;
        slow = as * slow + bs * sq;
        vu1 = av * vu1 + bv * Math.abs(v);
        vu2 = av * vu2 + bv * vu1;
        // New maxima are rare after the first moments, so these predict well.
        if (fast > maxFast) maxFast = fast;
        if (slow > maxSlow) maxSlow = slow;
        if (vu2 > maxVu) maxVu = vu2;
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
      fastDbfs: levelOf(powerToDb(this.fast[channel])),
      slowDbfs: levelOf(powerToDb(this.slow[channel])),
      vuDbfs: levelOf(amplitudeToDb(this.vu2[channel] * SINE_FORM_FACTOR)),
    };
  }

  result(): TimeWeightedLevelResult {
    const channels: ChannelTimeWeightedLevels[] = [];
    for (let c = 0; c < this.info.channels; c++) {
      channels.push({
        channel: c,
        maxFastDbfs: powerToDb(this.maxFast[c]),
        maxSlowDbfs: powerToDb(this.maxSlow[c]),
        maxVuDbfs: amplitudeToDb(this.maxVu[c] * SINE_FORM_FACTOR),
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
