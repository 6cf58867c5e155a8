// ITU-R BS.1770-5 loudness (momentary, short-term, gated integrated) and EBU Tech 3342
// loudness range, in one streaming state object.
//
// The K-weighted, channel-weighted power is summed into 100 ms sub-blocks (boundaries at
// round(k * fs / 10), so 400 ms blocks are exact "to the nearest sample" at any rate).
// Gating blocks and the 10 Hz short-term series are built from those sums. Maxima of
// momentary and short-term loudness come from a per-sample sliding window instead, so that a
// tone not aligned to the 100 ms grid still reads its level (EBU Tech 3341 cases 10 and 13).

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { channelWeight, highpassCoefficients, shelfCoefficients } from './k-weighting.ts';
import { KERNEL_FRAMES, KWeightingKernel, kWeightingLoop } from './kernels/k-weighting.ts';
import { GrowableFloat64 } from './growable.ts';
import { byStart, EventLog, type EventList } from './events.ts';

const LOUDNESS_OFFSET = -0.691;
const ABSOLUTE_GATE_LUFS = -70;
const RELATIVE_GATE_LU = -10;
const LRA_RELATIVE_GATE_LU = -20;
const SUBBLOCKS_PER_MOMENTARY = 4;
const SUBBLOCKS_PER_SHORT_TERM = 30;
const MAX_PRESIZED_SUBBLOCKS = 10 * 86_400;

export interface LoudnessOptions {
  /** Short-term values (10 Hz) above this become 'loud_short_term' events. */
  shortTermLimitLufs?: number;
  /** Momentary values (10 Hz) above this become 'loud_momentary' events. */
  momentaryLimitLufs?: number;
  maxEvents?: number;
}

/** Events: stretches of the 10 Hz momentary ('loud_momentary') and short-term ('loud_short_term') series above the configured limits, by start. */
export interface LoudnessResult extends EventList {
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
  /**
   * Momentary loudness every 100 ms (the 400 ms ending there); NaN before 400 ms and where the
   * loudness does not pass the -70 LUFS absolute gate (silence, and the K filter's decaying tail
   * after sound stops, which reads thousands of dB down) or is not finite.
   */
  momentaryLufs: Float64Array;
  /** Short-term loudness every 100 ms (the 3 s ending there); NaN before 3 s and as for momentaryLufs. */
  shortTermLufs: Float64Array;
  /** Gating blocks used: total and after both gates. */
  gatingBlocks: number;
  gatedBlocks: number;
}

export function powerToLufs(meanPower: number): number | null {
  return meanPower > 0 ? LOUDNESS_OFFSET + 10 * Math.log10(meanPower) : null;
}

function lufsToPower(lufs: number): number {
  return Math.pow(10, (lufs - LOUDNESS_OFFSET) / 10);
}

export class LoudnessMeter implements Meter<LoudnessResult> {
  private readonly sampleRate: number;
  /** Channels with a nonzero weight (LFE is excluded), and their K-weighting. */
  private readonly weightedChannels: number[];
  private readonly kernel: KWeightingKernel;

  // 100 ms sub-blocks
  private subblockIndex = 0;
  private subblockPower = 0;
  private subblockFrames = 0;
  private nextBoundaryFrame: number;
  private readonly recentPower = new Float64Array(SUBBLOCKS_PER_SHORT_TERM);
  private readonly recentFrames = new Float64Array(SUBBLOCKS_PER_SHORT_TERM);
  /** Mean power of the window ending at each sub-block, NaN until the window is full. */
  private readonly momentaryPowers: GrowableFloat64;
  private readonly shortTermPowers: GrowableFloat64;

  // Per-sample sliding windows for the maxima
  private ringPos = 0;
  private readonly momentaryFrames: number;
  private readonly shortTermFrames: number;
  private momentaryPos: number;
  // The window sums and maxima live in the kernel (kernel.window).
  private framesSeen = 0;

  // Stretches above the optional limits: [window start frame, last window end frame, max power]
  private readonly limits: {
    kind: 'loud_short_term' | 'loud_momentary';
    power: number;
    windowFrames: number;
    open: [number, number, number] | null;
  }[] = [];
  private readonly log: EventLog;
  private finished: LoudnessResult | null = null;

  constructor(info: StreamInfo, options: LoudnessOptions = {}) {
    this.sampleRate = info.sampleRate;
    const weighted = info.channelLabels
      .map((label, channel) => ({ channel, weight: channelWeight(label) }))
      .filter((c) => c.weight !== 0);
    this.weightedChannels = weighted.map((c) => c.channel);
    const loop = kWeightingLoop(shelfCoefficients(info.sampleRate), highpassCoefficients(info.sampleRate));
    this.kernel = new KWeightingKernel(
      loop,
      weighted.map((c) => c.weight),
      Math.round(3 * info.sampleRate),
    );
    this.nextBoundaryFrame = this.boundaryFrame(1);
    this.momentaryFrames = Math.round(0.4 * info.sampleRate);
    this.shortTermFrames = Math.round(3 * info.sampleRate);
    // One value per 100 ms sub-block (plus one for a final partial sub-block); a header's claim
    // is trusted up to a day of audio, beyond that the series grow as they go.
    const expectedSubblocks = info.expectedFrames
      ? Math.min(MAX_PRESIZED_SUBBLOCKS, Math.ceil((info.expectedFrames * 10) / info.sampleRate) + 1)
      : undefined;
    this.momentaryPowers = new GrowableFloat64(expectedSubblocks);
    this.shortTermPowers = new GrowableFloat64(expectedSubblocks);
    this.momentaryPos = this.shortTermFrames - this.momentaryFrames;
    this.log = new EventLog(info.sampleRate, options.maxEvents);
    if (options.momentaryLimitLufs !== undefined) {
      this.limits.push({
        kind: 'loud_momentary',
        power: lufsToPower(options.momentaryLimitLufs),
        windowFrames: this.momentaryFrames,
        open: null,
      });
    }
    if (options.shortTermLimitLufs !== undefined) {
      this.limits.push({
        kind: 'loud_short_term',
        power: lufsToPower(options.shortTermLimitLufs),
        windowFrames: this.shortTermFrames,
        open: null,
      });
    }
  }

  private boundaryFrame(subblock: number): number {
    return Math.round((subblock * this.sampleRate) / 10);
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    const channels = this.weightedChannels.map((c) => block.channelData[c]);
    for (let from = 0; from < frames; from += KERNEL_FRAMES) {
      const length = Math.min(KERNEL_FRAMES, frames - from);
      this.kernel.filter(channels, from, length);
      this.slideAndAccumulate(length);
    }
  }

  /**
   * The sliding windows over the kernel's power for frames [0, frames) of the last filter() call,
   * cut at sub-block boundaries and ring wraps so the kernel's loop tests neither.
   */
  private slideAndAccumulate(frames: number): void {
    const ringLength = this.shortTermFrames;
    const window = this.kernel.window;
    let n = 0;
    while (n < frames) {
      const pos = this.ringPos,
        mPos = this.momentaryPos;
      const take = Math.min(frames - n, this.nextBoundaryFrame - this.framesSeen, ringLength - pos, ringLength - mPos);
      window[0] = 0;
      this.kernel.slide(n, take, pos, mPos, this.framesSeen, this.momentaryFrames, this.shortTermFrames);
      this.ringPos = pos + take === ringLength ? 0 : pos + take;
      this.momentaryPos = mPos + take === ringLength ? 0 : mPos + take;
      this.subblockPower += window[0];
      this.subblockFrames += take;
      this.framesSeen += take;
      n += take;
      if (this.framesSeen === this.nextBoundaryFrame) this.closeSubblock();
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
    this.momentaryPowers.push(momentary ?? Number.NaN);
    const shortTerm = this.windowMeanPower(SUBBLOCKS_PER_SHORT_TERM);
    this.shortTermPowers.push(shortTerm ?? Number.NaN);
    for (const limit of this.limits) this.trackLimit(limit, limit.kind === 'loud_momentary' ? momentary : shortTerm);
  }

  /** Opens a stretch when a window is above its limit; the stretch covers the windows' span. */
  private trackLimit(limit: LoudnessMeter['limits'][number], power: number | null): void {
    const endFrame = this.boundaryFrame(this.subblockIndex);
    if (power !== null && power > limit.power) {
      if (limit.open) {
        limit.open[1] = endFrame;
        limit.open[2] = Math.max(limit.open[2], power);
      } else limit.open = [Math.max(0, endFrame - limit.windowFrames), endFrame, power];
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
    let power = 0,
      frames = 0;
    for (let k = 1; k <= count; k++) {
      const slot = (this.subblockIndex - k) % SUBBLOCKS_PER_SHORT_TERM;
      power += this.recentPower[slot];
      frames += this.recentFrames[slot];
    }
    return power / frames;
  }

  result(): LoudnessResult {
    if (this.finished) return this.finished;
    for (const limit of this.limits) this.closeLimit(limit);
    // The gating blocks and the short-term values are the series once their windows are full.
    const blocks = this.momentaryPowers.view().subarray(SUBBLOCKS_PER_MOMENTARY - 1);
    const { loudness: integratedLufs, kept } = gatedLoudness(blocks, RELATIVE_GATE_LU);
    const range = loudnessRange(this.shortTermPowers.view().subarray(SUBBLOCKS_PER_SHORT_TERM - 1));
    const [, , , maxMomentarySum, maxShortTermSum, maxMomentaryEndFrame, maxShortTermEndFrame] = this.kernel.window;
    const maxM = maxMomentarySum >= 0 ? powerToLufs(maxMomentarySum / this.momentaryFrames) : null;
    const maxS = maxShortTermSum >= 0 ? powerToLufs(maxShortTermSum / this.shortTermFrames) : null;
    this.finished = {
      integratedLufs,
      loudnessRangeLu: range?.rangeLu ?? null,
      loudnessRangeLowLufs: range?.lowLufs ?? null,
      loudnessRangeHighLufs: range?.highLufs ?? null,
      maxMomentaryLufs: maxM,
      maxShortTermLufs: maxS,
      maxMomentaryAtSeconds: maxM === null ? null : maxMomentaryEndFrame / this.sampleRate,
      maxShortTermAtSeconds: maxS === null ? null : maxShortTermEndFrame / this.sampleRate,
      // Converted in place (the powers are not needed again): no second copy of a long series.
      momentaryLufs: toLufsInPlace(this.momentaryPowers.view()),
      shortTermLufs: toLufsInPlace(this.shortTermPowers.view()),
      gatingBlocks: blocks.length,
      gatedBlocks: kept,
      ...this.log.list(byStart),
    };
    return this.finished;
  }
}

/**
 * Powers to LUFS in place. NaN where there is no value (NaN in) and where the power does not pass
 * the absolute gate of BS.1770-5 eq. (6) (l > -70 LKFS), the same test the gated readings apply,
 * or is infinite: the document shows null there, never a value below -70.
 */
function toLufsInPlace(series: Float64Array): Float64Array {
  const gate = lufsToPower(ABSOLUTE_GATE_LUFS);
  for (let i = 0; i < series.length; i++) {
    const p = series[i];
    series[i] = p > gate && p < Infinity ? LOUDNESS_OFFSET + 10 * Math.log10(p) : Number.NaN;
  }
  return series;
}

/**
 * Gated integrated loudness (BS.1770-5 eqs. (4)-(7)) of the gating blocks that start at or after
 * `fromFrame`: the programme after a line-up. From the result's momentary series (LUFS at 10 Hz,
 * NaN below the absolute gate), back to powers by 10^((L + 0.691) / 10): within 1e-12 LU of the
 * powers themselves. Block j starts at round(j * fs / 10), as the meter's sub-blocks do.
 */
export function integratedLufsFrom(momentaryLufs: Float64Array, fromFrame: number, sampleRate: number): number | null {
  return gatedLoudness(gatingBlocksFrom(momentaryLufs, fromFrame, sampleRate).powers, RELATIVE_GATE_LU).loudness;
}

/**
 * The gating blocks' powers from the momentary series, from the first block that starts at or
 * after `fromFrame` (`first`: its index; block j starts at round(j * fs / 10)). Below the
 * absolute gate a block's power is 0.
 */
export function gatingBlocksFrom(
  momentaryLufs: Float64Array,
  fromFrame: number,
  sampleRate: number,
): { first: number; powers: Float64Array } {
  let first = Math.max(0, Math.floor((fromFrame * 10) / sampleRate) - 1);
  while (Math.round((first * sampleRate) / 10) < fromFrame) first++;
  const start = SUBBLOCKS_PER_MOMENTARY - 1 + first;
  const powers = new Float64Array(Math.max(0, momentaryLufs.length - start));
  for (let i = 0; i < powers.length; i++) {
    const lufs = momentaryLufs[start + i];
    powers[i] = Number.isNaN(lufs) ? 0 : 10 ** ((lufs - LOUDNESS_OFFSET) / 10);
  }
  return { first, powers };
}

/** Gated loudness with BS.1770-5's relative gate (eq. (6)). */
export function gatedLufs(blockPowers: Float64Array): number | null {
  return gatedLoudness(blockPowers, RELATIVE_GATE_LU).loudness;
}

/** BS.1770-5 eqs. (4)-(7): absolute gate at -70 LKFS, then a relative gate. */
export function gatedLoudness(
  blockPowers: Float64Array,
  relativeGateLu: number,
): { loudness: number | null; kept: number } {
  const absolutePower = lufsToPower(ABSOLUTE_GATE_LUFS);
  let sum = 0,
    count = 0;
  for (const p of blockPowers)
    if (p > absolutePower) {
      sum += p;
      count++;
    }
  if (count === 0) return { loudness: null, kept: 0 };
  const relativePower = (sum / count) * Math.pow(10, relativeGateLu / 10);
  let gatedSum = 0,
    kept = 0;
  for (const p of blockPowers)
    if (p > absolutePower && p > relativePower) {
      gatedSum += p;
      kept++;
    }
  return { loudness: kept === 0 ? null : powerToLufs(gatedSum / kept), kept };
}

/** EBU Tech 3342 section 5: P95 - P10 of the gated short-term values. */
export function loudnessRange(
  shortTermPowers: Float64Array,
): { rangeLu: number; lowLufs: number; highLufs: number } | null {
  const absolutePower = lufsToPower(ABSOLUTE_GATE_LUFS);
  let sum = 0,
    count = 0;
  for (const p of shortTermPowers)
    if (p > absolutePower) {
      sum += p;
      count++;
    }
  if (count === 0) return null;
  const relativePower = (sum / count) * Math.pow(10, LRA_RELATIVE_GATE_LU / 10);
  const gate = Math.max(absolutePower, relativePower);
  let kept = 0,
    largest = 0;
  for (let i = 0; i < shortTermPowers.length; i++) {
    const p = shortTermPowers[i];
    if (p > gate) {
      kept++;
      if (p > largest) largest = p;
    }
  }
  if (kept === 0) return null;
  // The same values at the same percentile indices as sorting the gated values would give.
  const percentile = (p: number) =>
    kthSmallestAbove(shortTermPowers, gate, largest, Math.round(((kept - 1) * p) / 100));
  const lowLufs = powerToLufs(percentile(10)) as number;
  const highLufs = powerToLufs(percentile(95)) as number;
  return { rangeLu: highLufs - lowLufs, lowLufs, highLufs };
}

const bitsScratch = new Float64Array(1);
const bitsView = new BigUint64Array(bitsScratch.buffer);
const bitsOf = (x: number): bigint => {
  bitsScratch[0] = x;
  return bitsView[0];
};
const bitsToNumber = (bits: bigint): number => {
  bitsView[0] = bits;
  return bitsScratch[0];
};

/**
 * The k-th smallest (0-based) of the values of `series` above `gate` (>= 0), whose largest is
 * `largest`, without copying them out (3 hours of short-term values are 0.9 MB): a bisection on
 * the bit patterns, whose order is the order of positive doubles, counting at each step the values
 * at or below the candidate. It ends on the smallest pattern with more than k values at or below
 * it, which is the k-th value itself. At most 64 counting passes.
 */
export function kthSmallestAbove(series: Float64Array, gate: number, largest: number, k: number): number {
  let below = bitsOf(gate); // no value above the gate is at or below this
  let atOrAbove = bitsOf(largest); // every value is at or below this
  while (atOrAbove - below > 1n) {
    const middle = (below + atOrAbove) >> 1n;
    const candidate = bitsToNumber(middle);
    let count = 0;
    for (let i = 0; i < series.length; i++) {
      const v = series[i];
      if (v > gate && v <= candidate) count++;
    }
    if (count > k) atOrAbove = middle;
    else below = middle;
  }
  return bitsToNumber(atOrAbove);
}
