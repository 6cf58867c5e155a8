// Relations between channels: dead channels, exact and near copies, polarity inversion, phase correlation.
//
// Correlation is uncentred, r = sum(ab) / sqrt(sum(a^2) sum(b^2)), as audio correlation meters read it
// (no mean removal; a large DC offset biases it). Phase windows are non-overlapping, windowSeconds long
// (default 3 s: long enough that brief antiphase in reverbs does not count), aligned to the stream start;
// a final partial window is judged when it holds at least half a window. A window is flagged when both
// channels' RMS in it is at or above signalFloorDbfs and r < phaseThreshold; consecutive flagged
// windows merge into one 'phase_problem' event. LFE pairs are skipped for phase.
// Copies: exact (every sample equal, or a == -b) or near (|r| > nearCorrelation with RMS within
// nearRmsDb, e.g. after a lossy codec); both produce 'duplicate_channel' / 'inverted_channel' events.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { EventLog, type EventList } from './events.ts';
import { isLowFrequencyChannel } from './layouts.ts';
import { PairSumsKernel } from './kernels/pair-sums.ts';
import { dbToPower, powerToDb } from './units.ts';
import { EarmarkError } from '../errors/index.ts';

/** Window correlation below this flags a phase problem (common practice; no standard fixes it). */
export const DEFAULT_PHASE_THRESHOLD = -0.5;

export interface ChannelRelationOptions {
  windowSeconds?: number;
  /** Window correlation below this flags a phase problem. Default DEFAULT_PHASE_THRESHOLD. */
  phaseThreshold?: number;
  /** Both channels need at least this RMS in a window for it to be judged. Default -50 dBFS. */
  signalFloorDbfs?: number;
  /** Near-copy rule: |r| above this ... Default 0.9999. */
  nearCorrelation?: number;
  /** ... and RMS levels within this many dB. Default 0.01. */
  nearRmsDb?: number;
  maxEvents?: number;
}

export interface ChannelPairRelation {
  channel: number;
  otherChannel: number;
  /** Whole-stream uncentred correlation; null when either channel is dead. */
  correlation: number | null;
  identical: boolean;
  inverted: boolean;
  nearIdentical: boolean;
  nearInverted: boolean;
  /** False for pairs with LFE: no phase windows judged. */
  phaseChecked: boolean;
  /** Lowest correlation of a judged window; null when no window had signal in both channels. */
  minWindowCorrelation: number | null;
  phaseProblemWindows: number;
}

/** Events: 'dead_channel', 'duplicate_channel', 'inverted_channel' and 'phase_problem'. */
export interface ChannelRelationResult extends EventList {
  windowSeconds: number;
  deadChannels: number[];
  pairs: ChannelPairRelation[];
}

export class ChannelRelationMeter implements Meter<ChannelRelationResult> {
  private readonly windowSeconds: number;
  private readonly windowFrames: number;
  private readonly phaseThreshold: number;
  private readonly floorPower: number;
  private readonly nearCorrelation: number;
  private readonly nearRmsDb: number;
  private readonly log: EventLog;
  private readonly pairA: Int32Array;
  private readonly pairB: Int32Array;
  private readonly pairPhase: Uint8Array;
  private readonly sumSq: Float64Array;
  private readonly winSumSq: Float64Array;
  private readonly pairSum: Float64Array;
  private readonly winPairSum: Float64Array;
  private readonly identical: Uint8Array;
  private readonly inverted: Uint8Array;
  private readonly minWindowR: Float64Array;
  private readonly flaggedWindows: Float64Array;
  // Open phase event per pair (start -1 = none).
  private readonly openStart: Float64Array;
  private readonly openEnd: Float64Array;
  private readonly openMinR: Float64Array;
  private readonly openCount: Float64Array;
  private windowStart = 0;
  private windowFill = 0;
  private finished: ChannelRelationResult | null = null;
  /** Made on first use: a mono stream has no pair. */
  private pairSums: PairSumsKernel | null = null;

  constructor(
    private readonly info: StreamInfo,
    options: ChannelRelationOptions = {},
  ) {
    this.windowSeconds = options.windowSeconds ?? 3;
    this.windowFrames = Math.round(this.windowSeconds * info.sampleRate);
    if (!(this.windowFrames >= 2)) {
      throw new EarmarkError('invalid_argument', 'windowSeconds must span at least 2 frames', {
        field: 'windowSeconds',
      });
    }
    this.phaseThreshold = options.phaseThreshold ?? DEFAULT_PHASE_THRESHOLD;
    this.floorPower = dbToPower(options.signalFloorDbfs ?? -50);
    this.nearCorrelation = options.nearCorrelation ?? 0.9999;
    this.nearRmsDb = options.nearRmsDb ?? 0.01;
    this.log = new EventLog(info.sampleRate, options.maxEvents);
    const n = info.channels;
    const pairs = (n * (n - 1)) / 2;
    this.pairA = new Int32Array(pairs);
    this.pairB = new Int32Array(pairs);
    this.pairPhase = new Uint8Array(pairs);
    let k = 0;
    for (let a = 0; a < n; a++) {
      for (let b = a + 1; b < n; b++) {
        this.pairA[k] = a;
        this.pairB[k] = b;
        this.pairPhase[k] =
          isLowFrequencyChannel(info.channelLabels[a]) || isLowFrequencyChannel(info.channelLabels[b]) ? 0 : 1;
        k++;
      }
    }
    this.sumSq = new Float64Array(n);
    this.winSumSq = new Float64Array(n);
    this.pairSum = new Float64Array(pairs);
    this.winPairSum = new Float64Array(pairs);
    this.identical = new Uint8Array(pairs).fill(1);
    this.inverted = new Uint8Array(pairs).fill(1);
    this.minWindowR = new Float64Array(pairs).fill(Infinity);
    this.flaggedWindows = new Float64Array(pairs);
    this.openStart = new Float64Array(pairs).fill(-1);
    this.openEnd = new Float64Array(pairs);
    this.openMinR = new Float64Array(pairs);
    this.openCount = new Float64Array(pairs);
  }

  push(block: PcmBlock): void {
    let offset = 0;
    while (offset < block.frames) {
      const length = Math.min(block.frames - offset, this.windowFrames - this.windowFill);
      this.accumulate(block.channelData, offset, offset + length);
      offset += length;
      this.windowFill += length;
      if (this.windowFill === this.windowFrames) this.endWindow(true);
    }
  }

  private accumulate(data: readonly Float32Array[], from: number, to: number): void {
    const w = this.winSumSq;
    if (this.pairA.length === 0) {
      const x = data[0];
      let s = w[0];
      for (let i = from; i < to; i++) s += x[i] * x[i];
      w[0] = s;
      return;
    }
    // Squares ride along in the pair loops: channel 0 and 1 in pair (0, 1), channel b in pair (0, b),
    // so every channel is read in as few passes as possible.
    for (let k = 0; k < this.pairA.length; k++) {
      const a = this.pairA[k];
      const b = this.pairB[k];
      const xa = data[a];
      const xb = data[b];
      let ab = this.winPairSum[k];
      if (k === 0) {
        // The pair every layout has (the whole work for stereo) by the SIMD kernel.
        const kernel = (this.pairSums ??= new PairSumsKernel());
        const sums = kernel.sums;
        sums[0] = w[a];
        sums[1] = w[b];
        sums[2] = ab;
        kernel.add(xa, xb, from, to);
        w[a] = sums[0];
        w[b] = sums[1];
        ab = sums[2];
      } else if (a === 0) {
        let bb = w[b];
        for (let i = from; i < to; i++) {
          const q = xb[i];
          bb += q * q;
          ab += xa[i] * q;
        }
        w[b] = bb;
      } else {
        for (let i = from; i < to; i++) ab += xa[i] * xb[i];
      }
      this.winPairSum[k] = ab;
      // Candidates only; the first mismatch ends the check for good.
      if (this.identical[k] === 1) {
        for (let i = from; i < to; i++) {
          if (xa[i] !== xb[i]) {
            this.identical[k] = 0;
            break;
          }
        }
      }
      if (this.inverted[k] === 1) {
        for (let i = from; i < to; i++) {
          if (xa[i] !== -xb[i]) {
            this.inverted[k] = 0;
            break;
          }
        }
      }
    }
  }

  /** Folds the window into the totals; judges it for phase when `judge`. */
  private endWindow(judge: boolean): void {
    const start = this.windowStart;
    const end = start + this.windowFill;
    for (let c = 0; c < this.info.channels; c++) this.sumSq[c] += this.winSumSq[c];
    for (let k = 0; k < this.pairA.length; k++) {
      this.pairSum[k] += this.winPairSum[k];
      if (judge && this.pairPhase[k] === 1) this.judgeWindow(k, start, end);
    }
    this.winSumSq.fill(0);
    this.winPairSum.fill(0);
    this.windowStart = end;
    this.windowFill = 0;
  }

  private judgeWindow(k: number, start: number, end: number): void {
    const frames = end - start;
    const ea = this.winSumSq[this.pairA[k]];
    const eb = this.winSumSq[this.pairB[k]];
    const loud = ea / frames >= this.floorPower && eb / frames >= this.floorPower;
    if (!loud) {
      this.closePhase(k);
      return;
    }
    const r = this.winPairSum[k] / Math.sqrt(ea * eb);
    if (r < this.minWindowR[k]) this.minWindowR[k] = r;
    if (r >= this.phaseThreshold) {
      this.closePhase(k);
      return;
    }
    this.flaggedWindows[k]++;
    if (this.openStart[k] < 0) {
      this.openStart[k] = start;
      this.openMinR[k] = r;
      this.openCount[k] = 0;
    }
    this.openEnd[k] = end;
    this.openCount[k]++;
    if (r < this.openMinR[k]) this.openMinR[k] = r;
  }

  private closePhase(k: number): void {
    if (this.openStart[k] < 0) return;
    this.log.add({
      kind: 'phase_problem',
      channel: this.pairA[k],
      otherChannel: this.pairB[k],
      startFrame: this.openStart[k],
      endFrame: this.openEnd[k],
      peakValue: this.openMinR[k],
      count: this.openCount[k],
    });
    this.openStart[k] = -1;
  }

  result(): ChannelRelationResult {
    if (this.finished) return this.finished;
    const frames = this.windowStart + this.windowFill;
    if (this.windowFill > 0) this.endWindow(this.windowFill * 2 >= this.windowFrames);
    const pairCount = this.pairA.length;
    for (let k = 0; k < pairCount; k++) this.closePhase(k);

    const deadChannels: number[] = [];
    for (let c = 0; c < this.info.channels; c++) {
      if (frames > 0 && this.sumSq[c] === 0) {
        deadChannels.push(c);
        this.log.add({ kind: 'dead_channel', channel: c, startFrame: 0, endFrame: frames });
      }
    }
    const pairs: ChannelPairRelation[] = [];
    for (let k = 0; k < pairCount; k++) {
      const a = this.pairA[k];
      const b = this.pairB[k];
      const ea = this.sumSq[a];
      const eb = this.sumSq[b];
      const withSignal = ea > 0 && eb > 0;
      const correlation = withSignal ? this.pairSum[k] / Math.sqrt(ea * eb) : null;
      const rmsDiffDb = withSignal ? Math.abs((powerToDb(ea) ?? 0) - (powerToDb(eb) ?? 0)) : Infinity;
      const sameLevel = rmsDiffDb <= this.nearRmsDb;
      const identical = withSignal && this.identical[k] === 1;
      const inverted = withSignal && this.inverted[k] === 1;
      const nearIdentical = correlation !== null && sameLevel && correlation > this.nearCorrelation;
      const nearInverted = correlation !== null && sameLevel && correlation < -this.nearCorrelation;
      pairs.push({
        channel: a,
        otherChannel: b,
        correlation,
        identical,
        inverted,
        nearIdentical,
        nearInverted,
        phaseChecked: this.pairPhase[k] === 1,
        minWindowCorrelation: Number.isFinite(this.minWindowR[k]) ? this.minWindowR[k] : null,
        phaseProblemWindows: this.flaggedWindows[k],
      });
      // The later channel is reported as the copy of the earlier one.
      if (identical || nearIdentical) {
        this.log.add({
          kind: 'duplicate_channel',
          channel: b,
          otherChannel: a,
          startFrame: 0,
          endFrame: frames,
          peakValue: correlation ?? undefined,
        });
      }
      if (inverted || nearInverted) {
        this.log.add({
          kind: 'inverted_channel',
          channel: b,
          otherChannel: a,
          startFrame: 0,
          endFrame: frames,
          peakValue: correlation ?? undefined,
        });
      }
    }
    this.finished = {
      windowSeconds: this.windowSeconds,
      deadChannels,
      pairs,
      ...this.log.list(),
    };
    return this.finished;
  }
}
