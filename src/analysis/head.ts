// The head of a delivery: line-up tone, silence and a sync pop before the programme, and a tail
// pop after it. Each channel is read in 50 ms ticks until the programme starts, then only the
// tail tracker runs (pop-tracker.ts: one comparison per envelope chunk).
//
// Per channel a sounding run (bounded by silence, sample-exact) is a tone when its inner ticks
// (all but the first and last, which may be partly silent) read as one sine: crest within
// TONE_CREST_TOLERANCE_DB of 3.01 dB, level within TONE_LEVEL_TOLERANCE_DB and frequency within
// TONE_FREQUENCY_TOLERANCE of the run so far, for at least minToneSeconds. A change of tone
// without silence closes one segment and opens the next (EBU Tech 3304-style identification).
// A run of at most maxPopSeconds after silence that reads as a sine burst is a pop; anything
// else sounding is the programme, which starts at the first sample of that run.
// Tones from about 40 Hz to fs/12 (4 kHz at 48 kHz) read within these tolerances.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { EnvelopeBuilder } from './envelope.ts';
import { type FoundPop, TailPopTracker } from './pop-tracker.ts';
import { accumulate, CrossingTrigger, SINE_CREST_DB, sineBurst, ToneSums } from './tone-stats.ts';
import { amplitudeToDb, dbToAmplitude, powerToDb } from './units.ts';
import { EarmarkError } from '../errors/index.ts';

export const HEAD_TICK_SECONDS = 0.05;
export const TONE_CREST_TOLERANCE_DB = 0.5;
export const TONE_LEVEL_TOLERANCE_DB = 0.5;
/** Relative, or 1 Hz when that is more. */
export const TONE_FREQUENCY_TOLERANCE = 0.01;
/** Our defaults: an EBU Tech 3304 identification burst (0.5 s) still counts as tone. */
export const DEFAULT_MIN_TONE_SECONDS = 0.4;
/** One frame is 33-42 ms at 23.976-30 fps; this leaves room for ramps. */
export const DEFAULT_MAX_POP_SECONDS = 0.1;
/** Silence on both sides of a tail pop. */
export const DEFAULT_POP_ISOLATION_SECONDS = 0.25;
const MAX_SEGMENTS = 64;
const MAX_POPS = 8;

export interface HeadMeterOptions {
  silenceThresholdDbfs?: number;
  minToneSeconds?: number;
  maxPopSeconds?: number;
  popIsolationSeconds?: number;
}

/** A stretch of steady sine: a line-up tone segment or a sync pop. */
interface SineSpan {
  startFrame: number;
  endFrame: number;
  startSeconds: number;
  endSeconds: number;
  frequencyHz: number;
  peakDbfs: number;
  rmsDbfs: number;
}

export interface ToneSegment extends SineSpan {
  channel: number;
  /** AES17: RMS referenced to a full-scale sine (RMS + 3.01 dB), equal to the peak for a sine. */
  rmsAes17Db: number;
  /** Still sounding when the programme started (no silence between). */
  intoProgramme: boolean;
}

export interface PopReading extends SineSpan {
  channels: number[];
}

export interface HeadResult {
  thresholdDbfs: number;
  minToneSeconds: number;
  maxPopSeconds: number;
  /** Tone segments per channel in start order (at most 64 kept; all counted). */
  toneSegments: ToneSegment[];
  toneSegmentsTotal: number;
  /** The first sample of the programme; null when the stream is all head (tone, silence, pops). */
  programmeStartFrame: number | null;
  programmeStartSeconds: number | null;
  /** From the end of the last tone to the programme start; null without tone or programme. */
  toneGapSeconds: number | null;
  /** Some tone sounds up to or into the programme start. */
  toneIntoProgramme: boolean;
  /** The first sync pop before the programme, and how many were found there. */
  headPop: PopReading | null;
  headPops: number;
  /** The last sine burst after the programme with nothing but silence after it. */
  tailPop: PopReading | null;
  /** With a tail pop: the end of the last sound before it (the programme's end). */
  programmeEndFrame: number | null;
  programmeEndSeconds: number | null;
}

class ChannelHead {
  readonly tick = new ToneSums();
  readonly pending = new ToneSums();
  readonly run = new ToneSums();
  readonly inner = new ToneSums();
  innerFrames = 0;
  innerTicks = 0;
  inRun = false;
  runStart = 0;
  fromSilence = false;
  runTicks = 0;
  pendingStart = 0;
  constructor(readonly trigger: CrossingTrigger) {}

  startRun(start: number, fromSilence: boolean, sums: ToneSums, sumsStart: number): void {
    this.inRun = true;
    this.runStart = start;
    this.fromSilence = fromSilence;
    this.run.copyFrom(sums);
    this.pending.copyFrom(sums);
    this.pendingStart = sumsStart;
    this.runTicks = 1;
    this.inner.reset();
    this.innerFrames = 0;
    this.innerTicks = 0;
  }
}

export class HeadMeter implements Meter<HeadResult> {
  private readonly thresholdDbfs: number;
  private readonly threshold: number;
  private readonly minToneSeconds: number;
  private readonly maxPopSeconds: number;
  private readonly minToneFrames: number;
  private readonly maxPopFrames: number;
  private readonly tickFrames: number;
  private readonly channels: ChannelHead[];
  private readonly tail: TailPopTracker;
  private readonly envelopes = new EnvelopeBuilder();
  private readonly segments: ToneSegment[] = [];
  private segmentsTotal = 0;
  private readonly pops: FoundPop[] = [];
  private popsTotal = 0;
  private headDone = false;
  private programmeStart: number | null = null;
  private tickStart = 0;
  private tickFill = 0;
  private frames = 0;
  private finished: HeadResult | null = null;

  constructor(
    private readonly info: StreamInfo,
    options: HeadMeterOptions = {},
  ) {
    this.thresholdDbfs = options.silenceThresholdDbfs ?? -60;
    this.minToneSeconds = options.minToneSeconds ?? DEFAULT_MIN_TONE_SECONDS;
    this.maxPopSeconds = options.maxPopSeconds ?? DEFAULT_MAX_POP_SECONDS;
    const isolation = options.popIsolationSeconds ?? DEFAULT_POP_ISOLATION_SECONDS;
    if (
      !Number.isFinite(this.thresholdDbfs) ||
      !(this.minToneSeconds > 0 && this.minToneSeconds <= 3600) ||
      !(this.maxPopSeconds > 0 && this.maxPopSeconds <= 1) ||
      !(isolation >= 0 && isolation <= 60)
    ) {
      throw new EarmarkError('invalid_argument', 'head: threshold, tone and pop durations out of range', {
        field: 'head',
      });
    }
    const rate = info.sampleRate;
    this.threshold = dbToAmplitude(this.thresholdDbfs);
    this.minToneFrames = Math.round(this.minToneSeconds * rate);
    this.maxPopFrames = Math.round(this.maxPopSeconds * rate);
    this.tickFrames = Math.max(1, Math.round(HEAD_TICK_SECONDS * rate));
    this.channels = Array.from({ length: info.channels }, () => new ChannelHead(new CrossingTrigger(this.threshold)));
    const isolationFrames = Math.round(isolation * rate);
    this.tail = new TailPopTracker(info.channels, rate, this.threshold, this.maxPopFrames, isolationFrames);
  }

  push(block: PcmBlock): void {
    const base = this.frames;
    this.tail.push(block, this.envelopes.of(block), base);
    for (let pos = 0; pos < block.frames && !this.headDone; ) {
      const take = Math.min(block.frames - pos, this.tickFrames - this.tickFill);
      for (let c = 0; c < this.channels.length; c++) {
        const ch = this.channels[c];
        accumulate(block.channelData[c], pos, pos + take, base, this.threshold, ch.trigger, ch.tick);
      }
      pos += take;
      this.tickFill += take;
      if (this.tickFill === this.tickFrames) this.endTick();
    }
    this.frames = base + block.frames;
  }

  private endTick(): void {
    let programme = Infinity;
    for (let c = 0; c < this.channels.length; c++) {
      const ch = this.channels[c];
      programme = Math.min(programme, this.tickChannel(c));
      ch.trigger.follow(ch.tick.peak);
      ch.tick.reset();
    }
    this.tickStart += this.tickFrames;
    this.tickFill = 0;
    if (programme < Infinity) this.finishHead(programme, this.tickStart);
  }

  /** One channel's finished tick; returns where the programme starts in it, or Infinity. */
  private tickChannel(c: number): number {
    const ch = this.channels[c];
    const loud = ch.tick.peak >= this.threshold;
    if (!ch.inRun) {
      if (loud) ch.startRun(ch.tick.firstLoud, true, ch.tick, this.tickStart);
      return Infinity;
    }
    if (!loud) return this.endRun(c, ch.run.lastLoud + 1);
    if (ch.runTicks >= 2 && !this.steady(ch)) {
      // The pending tick breaks the tone: a proven tone ends where it starts, anything else is programme.
      const at = ch.pendingStart;
      if (ch.innerTicks === 0 || at - ch.runStart < this.minToneFrames) return ch.runStart;
      this.closeTone(c, ch.runStart, at);
      ch.startRun(at, false, ch.pending, at);
    }
    ch.run.addSums(ch.tick);
    ch.pending.copyFrom(ch.tick);
    ch.pendingStart = this.tickStart;
    ch.runTicks++;
    return Infinity;
  }

  /** The pending tick, a whole inner tick of the run: one more tick of the same sine, or not. */
  private steady(ch: ChannelHead): boolean {
    const t = ch.pending;
    const frames = this.tickFrames;
    const crest = t.crestDb(frames);
    const hz = t.frequencyHz(this.info.sampleRate);
    if (crest === null || hz === null || Math.abs(crest - SINE_CREST_DB) > TONE_CREST_TOLERANCE_DB) return false;
    if (ch.innerTicks > 0) {
      const levelDb = 10 * Math.log10(t.meanSquare(frames) / ch.inner.meanSquare(ch.innerFrames));
      const runHz = ch.inner.frequencyHz(this.info.sampleRate) ?? hz;
      if (Math.abs(levelDb) > TONE_LEVEL_TOLERANCE_DB) return false;
      if (Math.abs(hz - runHz) > Math.max(1, TONE_FREQUENCY_TOLERANCE * runHz)) return false;
    }
    ch.inner.addSums(t);
    ch.innerFrames += frames;
    ch.innerTicks++;
    return true;
  }

  /** A run ends in silence at `end`: tone, pop, or the programme (its start returned). */
  private endRun(c: number, end: number): number {
    const ch = this.channels[c];
    ch.inRun = false;
    const frames = end - ch.runStart;
    if (ch.innerTicks > 0 && frames >= this.minToneFrames) {
      this.closeTone(c, ch.runStart, end);
      return Infinity;
    }
    if (ch.fromSilence && frames <= this.maxPopFrames) {
      const reading = sineBurst(ch.run, frames, this.info.sampleRate);
      if (reading) {
        this.addPop({ ...reading, startFrame: ch.runStart, endFrame: end, channels: [c] });
        return Infinity;
      }
    }
    return ch.runStart;
  }

  private closeTone(c: number, startFrame: number, endFrame: number): void {
    const ch = this.channels[c];
    const rate = this.info.sampleRate;
    const rmsDbfs = powerToDb(ch.inner.meanSquare(ch.innerFrames));
    const peakDbfs = amplitudeToDb(ch.inner.peak);
    const frequencyHz = ch.inner.frequencyHz(rate);
    this.segmentsTotal++;
    if (rmsDbfs === null || peakDbfs === null || frequencyHz === null || this.segments.length >= MAX_SEGMENTS) return;
    this.segments.push({
      channel: c,
      startFrame,
      endFrame,
      startSeconds: startFrame / rate,
      endSeconds: endFrame / rate,
      frequencyHz,
      peakDbfs,
      rmsDbfs,
      rmsAes17Db: rmsDbfs + SINE_CREST_DB,
      intoProgramme: false,
    });
  }

  /** Channels' pops that overlap in time are one pop; its reading is the loudest channel's. */
  private addPop(pop: FoundPop): void {
    const same = this.pops.find((p) => p.startFrame < pop.endFrame && pop.startFrame < p.endFrame);
    if (!same) {
      this.popsTotal++;
      if (this.pops.length < MAX_POPS) this.pops.push(pop);
      return;
    }
    const louder = pop.peakDbfs > same.peakDbfs;
    same.channels.push(...pop.channels);
    same.startFrame = Math.min(same.startFrame, pop.startFrame);
    same.endFrame = Math.max(same.endFrame, pop.endFrame);
    if (louder) Object.assign(same, { frequencyHz: pop.frequencyHz, peakDbfs: pop.peakDbfs, rmsDbfs: pop.rmsDbfs });
  }

  /**
   * The programme starts at `programme` (seen by the end of tick `now`). Other channels' runs
   * that began earlier and are no proven tone start it earlier; a proven tone still sounding
   * goes into it. Nothing after is read.
   */
  private finishHead(programme: number, now: number): void {
    this.headDone = true;
    let start = programme;
    for (let c = 0; c < this.channels.length; c++) {
      const ch = this.channels[c];
      if (!ch.inRun) continue;
      ch.inRun = false;
      if (ch.innerTicks > 0 && now - ch.runStart >= this.minToneFrames) this.closeTone(c, ch.runStart, now);
      else if (ch.runStart < start) start = ch.runStart;
    }
    this.programmeStart = start;
    for (const s of this.segments) if (s.endFrame >= start) s.intoProgramme = true;
  }

  /** The end of the stream ends every run (its last, partial tick included). */
  private finishAtEnd(): void {
    let programme = Infinity;
    for (let c = 0; c < this.channels.length; c++) {
      const ch = this.channels[c];
      const loud = this.tickFill > 0 && ch.tick.peak >= this.threshold;
      if (loud && !ch.inRun) ch.startRun(ch.tick.firstLoud, true, ch.tick, this.tickStart);
      else if (loud) ch.run.addSums(ch.tick);
      if (ch.inRun) programme = Math.min(programme, this.endRun(c, ch.run.lastLoud + 1));
    }
    this.headDone = true;
    if (programme < Infinity) this.finishHead(programme, this.frames);
  }

  result(): HeadResult {
    if (this.finished) return this.finished;
    if (!this.headDone) this.finishAtEnd();
    const rate = this.info.sampleRate;
    const start = this.programmeStart;
    const reading = (p: FoundPop): PopReading => ({
      ...p,
      channels: [...p.channels].sort((a, b) => a - b),
      startSeconds: p.startFrame / rate,
      endSeconds: p.endFrame / rate,
    });
    const found = this.tail.result();
    const tail = found && start !== null && found.startFrame >= start ? found : null;
    const programmeEnd = tail ? this.tail.soundEndBeforeLast : null;
    const lastToneEnd = this.segments.reduce((end, s) => Math.max(end, s.endFrame), -1);
    const segments = [...this.segments].sort((a, b) => a.startFrame - b.startFrame || a.channel - b.channel);
    this.finished = {
      thresholdDbfs: this.thresholdDbfs,
      minToneSeconds: this.minToneSeconds,
      maxPopSeconds: this.maxPopSeconds,
      toneSegments: segments,
      toneSegmentsTotal: this.segmentsTotal,
      programmeStartFrame: start,
      programmeStartSeconds: start === null ? null : start / rate,
      toneGapSeconds: start === null || lastToneEnd < 0 ? null : Math.max(0, start - lastToneEnd) / rate,
      toneIntoProgramme: segments.some((s) => s.intoProgramme),
      // The head ends at the programme start: every pop found lies before it.
      headPop: this.pops.length > 0 ? reading(this.pops[0]) : null,
      headPops: this.popsTotal,
      tailPop: tail ? reading(tail) : null,
      programmeEndFrame: programmeEnd,
      programmeEndSeconds: programmeEnd === null ? null : programmeEnd / rate,
    };
    return this.finished;
  }
}
