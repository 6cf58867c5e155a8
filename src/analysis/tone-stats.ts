// Per-channel sums a sine reading needs: mean square, peak, the first and last sample at or above
// the silence threshold, and rising zero crossings at sub-sample positions (linear interpolation),
// so a frequency is (crossings - 1) periods over the time from the first to the last crossing.
// A Schmitt trigger (armed below -hysteresis) keeps low-level noise around zero from adding
// crossings. Used by the head meter (head.ts) for line-up tone and sync pops.

import { amplitudeToDb, powerToDb } from './units.ts';

/** Crest factor of a sine, sqrt(2), in dB (handbook: peak over RMS). */
export const SINE_CREST_DB = 10 * Math.log10(2);

export class ToneSums {
  sumSquares = 0;
  peak = 0;
  /** Stream frames of the first and last sample with |x| >= threshold; -1 when none. */
  firstLoud = -1;
  lastLoud = -1;
  crossings = 0;
  /** Stream positions (fractional frames) of the first and last rising crossing. */
  firstCrossing = 0;
  lastCrossing = 0;

  reset(): void {
    this.sumSquares = 0;
    this.peak = 0;
    this.firstLoud = -1;
    this.lastLoud = -1;
    this.crossings = 0;
    this.firstCrossing = 0;
    this.lastCrossing = 0;
  }

  /** Adds another span that follows this one in time. */
  addSums(o: ToneSums): void {
    this.sumSquares += o.sumSquares;
    if (o.peak > this.peak) this.peak = o.peak;
    if (o.firstLoud >= 0 && this.firstLoud < 0) this.firstLoud = o.firstLoud;
    if (o.lastLoud >= 0) this.lastLoud = o.lastLoud;
    if (o.crossings > 0) {
      if (this.crossings === 0) this.firstCrossing = o.firstCrossing;
      this.lastCrossing = o.lastCrossing;
      this.crossings += o.crossings;
    }
  }

  copyFrom(o: ToneSums): void {
    if (o === this) return;
    this.reset();
    this.addSums(o);
  }

  /** Hz from the crossings; null with fewer than two. */
  frequencyHz(sampleRate: number): number | null {
    if (this.crossings < 2 || this.lastCrossing <= this.firstCrossing) return null;
    return ((this.crossings - 1) * sampleRate) / (this.lastCrossing - this.firstCrossing);
  }

  meanSquare(frames: number): number {
    return frames > 0 ? this.sumSquares / frames : 0;
  }

  /** Peak over RMS in dB across `frames`; null for silence. */
  crestDb(frames: number): number | null {
    const rms = powerToDb(this.meanSquare(frames));
    const peak = amplitudeToDb(this.peak);
    return rms === null || peak === null ? null : peak - rms;
  }
}

/** A channel's trigger state across blocks. */
export class CrossingTrigger {
  previous = 0;
  armed = false;
  hysteresis: number;

  constructor(readonly floor: number) {
    this.hysteresis = floor;
  }

  /** Follows the level: a quarter of the last span's peak, never under the silence threshold. */
  follow(peak: number): void {
    this.hysteresis = Math.max(this.floor, 0.25 * peak);
  }
}

/** Adds samples x[from..to) (stream frame of x[0] is `base`) to `sums`; `threshold` is the silence level. */
export function accumulate(
  x: Float32Array,
  from: number,
  to: number,
  base: number,
  threshold: number,
  trigger: CrossingTrigger,
  sums: ToneSums,
): void {
  let sumSquares = 0;
  let peak = sums.peak;
  let firstLoud = sums.firstLoud;
  let lastLoud = sums.lastLoud;
  let previous = trigger.previous;
  let armed = trigger.armed;
  const low = -trigger.hysteresis;
  for (let i = from; i < to; i++) {
    const v = x[i];
    const a = Math.abs(v);
    sumSquares += v * v;
    if (a > peak) peak = a;
    if (a >= threshold) {
      if (firstLoud < 0) firstLoud = base + i;
      lastLoud = base + i;
    }
    if (v < low) armed = true;
    else if (armed && v >= 0 && previous < 0) {
      // Rising crossing between the previous sample and this one.
      const at = base + i - 1 + -previous / (v - previous);
      if (sums.crossings === 0) sums.firstCrossing = at;
      sums.lastCrossing = at;
      sums.crossings++;
      armed = false;
    }
    previous = v;
  }
  sums.sumSquares += sumSquares;
  sums.peak = peak;
  sums.firstLoud = firstLoud;
  sums.lastLoud = lastLoud;
  trigger.previous = previous;
  trigger.armed = armed;
}

/** What makes a short burst a sync pop: a sine (crest within this of 3.01 dB) of this many periods at least. */
export const POP_CREST_TOLERANCE_DB = 1;
export const POP_MIN_CROSSINGS = 4;

export interface BurstReading {
  frequencyHz: number;
  peakDbfs: number;
  rmsDbfs: number;
}

/** The burst's sine reading, or null when it is not a sine burst (a click, noise, a word). */
export function sineBurst(sums: ToneSums, frames: number, sampleRate: number): BurstReading | null {
  const frequencyHz = sums.frequencyHz(sampleRate);
  const crest = sums.crestDb(frames);
  const peakDbfs = amplitudeToDb(sums.peak);
  const rmsDbfs = powerToDb(sums.meanSquare(frames));
  if (frequencyHz === null || crest === null || peakDbfs === null || rmsDbfs === null) return null;
  if (sums.crossings < POP_MIN_CROSSINGS || Math.abs(crest - SINE_CREST_DB) > POP_CREST_TOLERANCE_DB) return null;
  return { frequencyHz, peakDbfs, rmsDbfs };
}
