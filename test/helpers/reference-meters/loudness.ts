// ITU-R BS.1770-5 loudness (momentary, short-term, gated integrated) and EBU Tech 3342
// loudness range, in one streaming state object.
//
// The K-weighted, channel-weighted power is summed into 100 ms sub-blocks (boundaries at
// round(k * fs / 10), so 400 ms blocks are exact "to the nearest sample" at any rate).
// Gating blocks and the 10 Hz short-term series are built from those sums. Maxima of
// momentary and short-term loudness come from a per-sample sliding window instead, so that a
// tone not aligned to the 100 ms grid still reads its level (EBU Tech 3341 cases 10 and 13).

import type { Meter, PcmBlock, StreamInfo } from '../../../src/analysis/audio.ts';
import { channelWeight, highpassCoefficients, shelfCoefficients } from '../../../src/analysis/k-weighting.ts';
import { GrowableFloat64 } from '../../../src/analysis/growable.ts';
import { EventLog, type AnalysisEvent } from '../../../src/analysis/events.ts';

const LOUDNESS_OFFSET = -0.691;
const ABSOLUTE_GATE_LUFS = -70;
const RELATIVE_GATE_LU = -10;
const LRA_RELATIVE_GATE_LU = -20;
const SUBBLOCKS_PER_MOMENTARY = 4;
const SUBBLOCKS_PER_SHORT_TERM = 30;

export interface LoudnessOptions {
  /** Short-term values (10 Hz) above this become 'loud_short_term' events. */
  shortTermLimitLufs?: number;
  /** Momentary values (10 Hz) above this become 'loud_momentary' events. */
  momentaryLimitLufs?: number;
  maxEvents?: number;
}

export interface LoudnessResult {
  /** Gated integrated loudness; null when no block passes the absolute gate. */
  integratedLufs: number | null;
  /** EBU Tech 3342 loudness range; null when no short-term value passes the gates. */
  loudnessRangeLu: number | null;
  /** The short-term values at the LRA's 10th and 95th percentiles. */
  loudnessRangeLowLufs: number | null;
  loudnessRangeHighLufs: number | null;
  maxMomentaryLufs: number | null;
  maxShortTermLufs: number | null;
  /** Time (s) of the end of the loudest momentary and short-term windows. */
  maxMomentaryAtSeconds: number | null;
  maxShortTermAtSeconds: number | null;
  /** Momentary loudness every 100 ms (the 400 ms ending there); NaN before 400 ms and where it is not finite or not above -70 LUFS. */
  momentaryLufs: Float64Array;
  /** Short-term loudness every 100 ms (the 3 s ending there); NaN before 3 s and where it is not finite or not above -70 LUFS. */
  shortTermLufs: Float64Array;
  /** Gating blocks used: total and after both gates. */
  gatingBlocks: number;
  gatedBlocks: number;
  /** Stretches of the 10 Hz momentary / short-term series above the configured limits. */
  events: AnalysisEvent[];
  eventsTotal: number;
  eventsTruncated: boolean;
}

export function powerToLufs(meanPower: number): number | null {
  return meanPower > 0 ? LOUDNESS_OFFSET + 10 * Math.log10(meanPower) : null;
}

function lufsToPower(lufs: number): number {
  return Math.pow(10, (lufs - LOUDNESS_OFFSET) / 10);
}

interface ChannelFilter {
  weight: number;
  // Two biquads, transposed direct form II state.
  s1a: number; s1b: number; s2a: number; s2b: number;
}

export class LoudnessMeter implements Meter<LoudnessResult> {
  private readonly sampleRate: number;
  private readonly filters: ChannelFilter[];
  private readonly shelf;
  private readonly highpass;
  private weightedPower = new Float64Array(0);

  // 100 ms sub-blocks
  private subblockIndex = 0;
  private subblockPower = 0;
  private subblockFrames = 0;
  private nextBoundaryFrame: number;
  private readonly recentPower = new Float64Array(SUBBLOCKS_PER_SHORT_TERM);
  private readonly recentFrames = new Float64Array(SUBBLOCKS_PER_SHORT_TERM);
  private readonly blockPowers = new GrowableFloat64();
  private readonly shortTermPowers = new GrowableFloat64();
  private readonly momentarySeries = new GrowableFloat64();

  // Per-sample sliding windows for the maxima
  private readonly ring: Float64Array;
  private ringPos = 0;
  private readonly momentaryFrames: number;
  private readonly shortTermFrames: number;
  private momentaryPos: number;
  private momentarySum = 0;
  private shortTermSum = 0;
  private maxMomentarySum = -1;
  private maxShortTermSum = -1;
  private maxMomentaryEndFrame = 0;
  private maxShortTermEndFrame = 0;
  private framesSeen = 0;

  // Stretches above the optional limits: [window start frame, last window end frame, max power]
  private readonly limits: { kind: 'loud_short_term' | 'loud_momentary'; power: number; windowFrames: number; open: [number, number, number] | null }[] = [];
  private readonly log: EventLog;

  constructor(info: StreamInfo, options: LoudnessOptions = {}) {
    this.sampleRate = info.sampleRate;
    this.shelf = shelfCoefficients(info.sampleRate);
    this.highpass = highpassCoefficients(info.sampleRate);
    this.filters = info.channelLabels.map((label) => ({ weight: channelWeight(label), s1a: 0, s1b: 0, s2a: 0, s2b: 0 }));
    this.nextBoundaryFrame = this.boundaryFrame(1);
    this.momentaryFrames = Math.round(0.4 * info.sampleRate);
    this.shortTermFrames = Math.round(3 * info.sampleRate);
    this.ring = new Float64Array(this.shortTermFrames);
    this.momentaryPos = this.shortTermFrames - this.momentaryFrames;
    this.log = new EventLog(info.sampleRate, options.maxEvents);
    if (options.momentaryLimitLufs !== undefined) {
      this.limits.push({ kind: 'loud_momentary', power: lufsToPower(options.momentaryLimitLufs), windowFrames: this.momentaryFrames, open: null });
    }
    if (options.shortTermLimitLufs !== undefined) {
      this.limits.push({ kind: 'loud_short_term', power: lufsToPower(options.shortTermLimitLufs), windowFrames: this.shortTermFrames, open: null });
    }
  }

  private boundaryFrame(subblock: number): number {
    return Math.round((subblock * this.sampleRate) / 10);
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    if (frames === 0) return;
    if (this.weightedPower.length < frames) this.weightedPower = new Float64Array(frames);
    const power = this.weightedPower;
    power.fill(0, 0, frames);
    this.filterInto(block, power);
    this.slideWindows(power, frames);
    this.accumulateSubblocks(power, frames);
  }

  /** K-weights every channel and adds its weighted squared output into `power`. */
  private filterInto(block: PcmBlock, power: Float64Array): void {
    const { b0: p0, b1: p1, b2: p2, a1: pa1, a2: pa2 } = this.shelf;
    const { a1: ha1, a2: ha2 } = this.highpass;
    for (let c = 0; c < this.filters.length; c++) {
      const f = this.filters[c];
      if (f.weight === 0) continue;
      const x = block.channelData[c];
      const g = f.weight;
      let s1a = f.s1a, s1b = f.s1b, s2a = f.s2a, s2b = f.s2b;
      for (let n = 0; n < block.frames; n++) {
        const xn = x[n];
        const y1 = p0 * xn + s1a;
        s1a = p1 * xn - pa1 * y1 + s1b;
        s1b = p2 * xn - pa2 * y1;
        const y2 = y1 + s2a;
        s2a = -2 * y1 - ha1 * y2 + s2b;
        s2b = y1 - ha2 * y2;
        power[n] += g * y2 * y2;
      }
      f.s1a = s1a; f.s1b = s1b; f.s2a = s2a; f.s2b = s2b;
    }
  }

  private slideWindows(power: Float64Array, frames: number): void {
    const ring = this.ring;
    const ringLength = ring.length;
    let pos = this.ringPos, mPos = this.momentaryPos;
    let mSum = this.momentarySum, sSum = this.shortTermSum;
    let maxM = this.maxMomentarySum, maxS = this.maxShortTermSum;
    let seen = this.framesSeen;
    const mFrames = this.momentaryFrames, sFrames = this.shortTermFrames;
    for (let n = 0; n < frames; n++) {
      const v = power[n];
      sSum += v - ring[pos];
      mSum += v - ring[mPos];
      ring[pos] = v;
      if (++pos === ringLength) pos = 0;
      if (++mPos === ringLength) mPos = 0;
      seen++;
      if (mSum > maxM && seen >= mFrames) { maxM = mSum; this.maxMomentaryEndFrame = seen; }
      if (sSum > maxS && seen >= sFrames) { maxS = sSum; this.maxShortTermEndFrame = seen; }
    }
    this.ringPos = pos; this.momentaryPos = mPos;
    this.momentarySum = mSum; this.shortTermSum = sSum;
    this.maxMomentarySum = maxM; this.maxShortTermSum = maxS;
    this.framesSeen = seen;
  }

  private accumulateSubblocks(power: Float64Array, frames: number): void {
    let n = 0;
    let position = this.framesSeen - frames;
    while (n < frames) {
      const take = Math.min(frames - n, this.nextBoundaryFrame - position);
      let sum = 0;
      for (let i = n; i < n + take; i++) sum += power[i];
      this.subblockPower += sum;
      this.subblockFrames += take;
      n += take;
      position += take;
      if (position === this.nextBoundaryFrame) this.closeSubblock();
    }
  }

  private closeSubblock(): void {
    const slot = this.subblockIndex % SUBBLOCKS_PER_SHORT_TERM;
    this.recentPower[slot] = this.subblockPower;
    this.recentFrames[slot] = this.subblockFrames;
    this.subblockIndex++;
    this.subblockPower = 0;
    this.subblockFrames = 0;
    this.nextBoundaryFrame = this.boundaryFrame(this.subblockIndex + 1);

    const momentary = this.windowMeanPower(SUBBLOCKS_PER_MOMENTARY);
    this.momentarySeries.push(momentary ?? Number.NaN);
    if (momentary !== null) this.blockPowers.push(momentary);
    const shortTerm = this.windowMeanPower(SUBBLOCKS_PER_SHORT_TERM);
    if (shortTerm !== null) this.shortTermPowers.push(shortTerm);
    for (const limit of this.limits) this.trackLimit(limit, limit.kind === 'loud_momentary' ? momentary : shortTerm);
  }

  /** Opens a stretch when a window is above its limit; the stretch covers the windows' span. */
  private trackLimit(limit: LoudnessMeter['limits'][number], power: number | null): void {
    const endFrame = this.boundaryFrame(this.subblockIndex);
    if (power !== null && power > limit.power) {
      if (limit.open) { limit.open[1] = endFrame; limit.open[2] = Math.max(limit.open[2], power); }
      else limit.open = [Math.max(0, endFrame - limit.windowFrames), endFrame, power];
      return;
    }
    this.closeLimit(limit);
  }

  private closeLimit(limit: LoudnessMeter['limits'][number]): void {
    if (!limit.open) return;
    const [startFrame, endFrame, power] = limit.open;
    this.log.add({ kind: limit.kind, channel: null, startFrame, endFrame, peakValue: powerToLufs(power) ?? undefined });
    limit.open = null;
  }

  /** Mean power of the last `count` sub-blocks, or null until that many are complete. */
  private windowMeanPower(count: number): number | null {
    if (this.subblockIndex < count) return null;
    let power = 0, frames = 0;
    for (let k = 1; k <= count; k++) {
      const slot = (this.subblockIndex - k) % SUBBLOCKS_PER_SHORT_TERM;
      power += this.recentPower[slot];
      frames += this.recentFrames[slot];
    }
    return power / frames;
  }

  result(): LoudnessResult {
    for (const limit of this.limits) this.closeLimit(limit);
    const blocks = this.blockPowers.view();
    const { loudness: integratedLufs, kept } = gatedLoudness(blocks, RELATIVE_GATE_LU);
    const range = loudnessRange(this.shortTermPowers.view());
    const momentaryLufs = Float64Array.from(this.momentarySeries.view(), (p) => (Number.isNaN(p) ? Number.NaN : seriesValue(p)));
    const stValues = Array.from(this.shortTermPowers.view(), seriesValue);
    const shortTermLufs = Float64Array.from([
      ...new Array<number>(Math.min(SUBBLOCKS_PER_SHORT_TERM - 1, this.subblockIndex)).fill(Number.NaN),
      ...stValues,
    ]);
    const maxM = this.maxMomentarySum >= 0 ? powerToLufs(this.maxMomentarySum / this.momentaryFrames) : null;
    const maxS = this.maxShortTermSum >= 0 ? powerToLufs(this.maxShortTermSum / this.shortTermFrames) : null;
    return {
      integratedLufs,
      loudnessRangeLu: range?.rangeLu ?? null,
      loudnessRangeLowLufs: range?.lowLufs ?? null,
      loudnessRangeHighLufs: range?.highLufs ?? null,
      maxMomentaryLufs: maxM,
      maxShortTermLufs: maxS,
      maxMomentaryAtSeconds: maxM === null ? null : this.maxMomentaryEndFrame / this.sampleRate,
      maxShortTermAtSeconds: maxS === null ? null : this.maxShortTermEndFrame / this.sampleRate,
      momentaryLufs,
      shortTermLufs,
      gatingBlocks: blocks.length,
      gatedBlocks: kept,
      events: [...this.log.events].sort((a, b) => a.startFrame - b.startFrame),
      eventsTotal: this.log.total,
      eventsTruncated: this.log.truncated,
    };
  }
}

/** A series point: the loudness when it is finite and passes the absolute gate (BS.1770-5 eq. (6): l > -70 LKFS), else NaN. */
function seriesValue(power: number): number {
  const lufs = powerToLufs(power);
  return lufs !== null && Number.isFinite(lufs) && lufs > ABSOLUTE_GATE_LUFS ? lufs : Number.NaN;
}

/** BS.1770-5 eqs. (4)-(7): absolute gate at -70 LKFS, then a relative gate. */
export function gatedLoudness(blockPowers: Float64Array, relativeGateLu: number): { loudness: number | null; kept: number } {
  const absolutePower = lufsToPower(ABSOLUTE_GATE_LUFS);
  let sum = 0, count = 0;
  for (const p of blockPowers) if (p > absolutePower) { sum += p; count++; }
  if (count === 0) return { loudness: null, kept: 0 };
  const relativePower = (sum / count) * Math.pow(10, relativeGateLu / 10);
  let gatedSum = 0, kept = 0;
  for (const p of blockPowers) if (p > absolutePower && p > relativePower) { gatedSum += p; kept++; }
  return { loudness: kept === 0 ? null : powerToLufs(gatedSum / kept), kept };
}

/** EBU Tech 3342 section 5: P95 - P10 of the gated short-term values. */
export function loudnessRange(shortTermPowers: Float64Array): { rangeLu: number; lowLufs: number; highLufs: number } | null {
  const absolutePower = lufsToPower(ABSOLUTE_GATE_LUFS);
  let sum = 0, count = 0;
  for (const p of shortTermPowers) if (p > absolutePower) { sum += p; count++; }
  if (count === 0) return null;
  const relativePower = (sum / count) * Math.pow(10, LRA_RELATIVE_GATE_LU / 10);
  const gated = shortTermPowers.filter((p) => p > absolutePower && p > relativePower).sort();
  if (gated.length === 0) return null;
  const percentile = (p: number) => gated[Math.round(((gated.length - 1) * p) / 100)];
  const lowLufs = powerToLufs(percentile(10)) as number;
  const highLufs = powerToLufs(percentile(95)) as number;
  return { rangeLu: highLufs - lowLufs, lowLufs, highLufs };
}
