// Silence: regions where every sample has |x| below the threshold for at least minDurationSeconds.
// The decision is per sample (no averaging window), so region bounds are sample-exact and a single
// sample at or above the threshold ends a region. Per channel, and for all channels together
// (a frame is silent when all its samples are). Head/tail/longest internal gap use the all-channel
// runs of any length; events only cover runs of at least the minimum duration.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { EventLog, type AnalysisEvent } from './events.ts';
import { amplitudeToDb } from './levels.ts';
import { byEndThenChannel } from './clipping.ts';
import { EarmarkError } from '../errors/index.ts';

/** ffmpeg silencedetect defaults (common practice): -60 dB for 2 s. */
export const DEFAULT_SILENCE_THRESHOLD_DBFS = -60;
export const DEFAULT_SILENCE_MIN_SECONDS = 2;

export interface SilenceMeterOptions {
  thresholdDbfs?: number;
  minDurationSeconds?: number;
  maxEvents?: number;
}

export interface SilenceTotals {
  /** Regions of at least the minimum duration. */
  regions: number;
  /** Seconds inside those regions. */
  silentSeconds: number;
}

export interface SilenceResult {
  thresholdDbfs: number;
  minDurationSeconds: number;
  /** All channels silent from the first frame on (any length, 0 when the first frame carries signal). */
  headSilenceSeconds: number;
  /** All channels silent up to the last frame (any length). */
  tailSilenceSeconds: number;
  /** Every frame of the stream is silent (then head = tail = duration). */
  allSilent: boolean;
  /** Longest all-channel silent run with signal on both sides (any length); 0 when none. */
  longestInternalGapSeconds: number;
  longestInternalGapStartFrame: number | null;
  channels: Array<SilenceTotals & { channel: number }>;
  all: SilenceTotals;
  /** 'silence' events, channel null for all channels; peakValue = loudest sample in dBFS, absent if digital silence. */
  events: AnalysisEvent[];
  eventsTotal: number;
  eventsTruncated: boolean;
}

type PendingEvent = Omit<AnalysisEvent, 'startSeconds' | 'endSeconds'>;

export class SilenceMeter implements Meter<SilenceResult> {
  private readonly thresholdDbfs: number;
  private readonly threshold: number;
  private readonly minDurationSeconds: number;
  private readonly minFrames: number;
  private readonly log: EventLog;
  // Open run per channel (start -1 = none); index n is the all-channel run.
  private readonly runStart: Float64Array;
  private readonly runPeak: Float64Array;
  private readonly regions: Float64Array;
  private readonly silentFrames: Float64Array;
  private readonly pending: PendingEvent[] = [];
  /** Per-frame max |x| over channels for the current block; grows to the largest block once. */
  private maxAbs = new Float32Array(0);
  private headFrames = 0;
  private headOpen = true;
  private longestGapFrames = 0;
  private longestGapStart: number | null = null;
  private frames = 0;
  private finished: SilenceResult | null = null;

  constructor(private readonly info: StreamInfo, options: SilenceMeterOptions = {}) {
    this.thresholdDbfs = options.thresholdDbfs ?? DEFAULT_SILENCE_THRESHOLD_DBFS;
    this.threshold = 10 ** (this.thresholdDbfs / 20);
    this.minDurationSeconds = options.minDurationSeconds ?? DEFAULT_SILENCE_MIN_SECONDS;
    if (!Number.isFinite(this.thresholdDbfs) || !(this.minDurationSeconds >= 0)) {
      throw new EarmarkError('invalid_argument', 'Silence threshold must be finite and minDurationSeconds >= 0', {
        field: 'silence',
      });
    }
    this.minFrames = Math.max(1, Math.round(this.minDurationSeconds * info.sampleRate));
    this.log = new EventLog(info.sampleRate, options.maxEvents);
    const slots = info.channels + 1;
    this.runStart = new Float64Array(slots).fill(-1);
    this.runPeak = new Float64Array(slots);
    this.regions = new Float64Array(slots);
    this.silentFrames = new Float64Array(slots);
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    const base = this.frames;
    const thr = this.threshold;
    const n = this.info.channels;
    if (this.maxAbs.length < frames) this.maxAbs = new Float32Array(frames);
    const m = this.maxAbs;
    m.fill(0, 0, frames);
    for (let c = 0; c < n; c++) {
      const x = block.channelData[c];
      let start = this.runStart[c];
      let peak = this.runPeak[c];
      for (let i = 0; i < frames; i++) {
        const a = Math.abs(x[i]);
        m[i] = Math.max(m[i], a);
        if (a < thr) {
          if (start < 0) {
            start = base + i;
            peak = 0;
          }
          if (a > peak) peak = a;
        } else if (start >= 0) {
          this.close(c, start, base + i, peak);
          start = -1;
        }
      }
      this.runStart[c] = start;
      this.runPeak[c] = peak;
    }
    this.scanAllChannels(m, frames, base);
    this.frames = base + frames;
    this.flushPending();
  }

  private scanAllChannels(m: Float32Array, frames: number, base: number): void {
    const thr = this.threshold;
    const slot = this.info.channels;
    let start = this.runStart[slot];
    let peak = this.runPeak[slot];
    for (let i = 0; i < frames; i++) {
      const a = m[i];
      if (a < thr) {
        if (start < 0) {
          start = base + i;
          peak = 0;
        }
        if (a > peak) peak = a;
      } else {
        if (start >= 0) {
          this.closeAll(start, base + i, peak);
          start = -1;
        }
        this.headOpen = false;
      }
    }
    this.runStart[slot] = start;
    this.runPeak[slot] = peak;
  }

  private closeAll(startFrame: number, endFrame: number, peak: number): void {
    if (startFrame === 0) {
      this.headFrames = endFrame;
    } else if (endFrame - startFrame > this.longestGapFrames) {
      this.longestGapFrames = endFrame - startFrame;
      this.longestGapStart = startFrame;
    }
    this.close(this.info.channels, startFrame, endFrame, peak);
  }

  private close(slot: number, startFrame: number, endFrame: number, peak: number): void {
    const length = endFrame - startFrame;
    if (length < this.minFrames) return;
    this.regions[slot]++;
    this.silentFrames[slot] += length;
    const event: PendingEvent = {
      kind: 'silence',
      channel: slot === this.info.channels ? null : slot,
      startFrame,
      endFrame,
    };
    const peakDbfs = amplitudeToDb(peak);
    if (peakDbfs !== null) event.peakValue = peakDbfs;
    this.pending.push(event);
  }

  private flushPending(): void {
    if (this.pending.length === 0) return;
    this.pending.sort(byEndThenChannel);
    for (const event of this.pending) this.log.add(event);
    this.pending.length = 0;
  }

  result(): SilenceResult {
    if (this.finished) return this.finished;
    const n = this.info.channels;
    const end = this.frames;
    const fs = this.info.sampleRate;
    // An open all-channel run is the tail; it is the head too when nothing ever sounded.
    const tailStart = this.runStart[n];
    const tailFrames = tailStart >= 0 ? end - tailStart : 0;
    const allSilent = end > 0 && this.headOpen;
    if (allSilent) this.headFrames = end;
    for (let slot = 0; slot <= n; slot++) {
      const start = this.runStart[slot];
      if (start >= 0) this.close(slot, start, end, this.runPeak[slot]);
      this.runStart[slot] = -1;
    }
    this.flushPending();
    const totals = (slot: number): SilenceTotals => ({
      regions: this.regions[slot],
      silentSeconds: this.silentFrames[slot] / fs,
    });
    const channels: SilenceResult['channels'] = [];
    for (let c = 0; c < n; c++) channels.push({ channel: c, ...totals(c) });
    this.finished = {
      thresholdDbfs: this.thresholdDbfs,
      minDurationSeconds: this.minDurationSeconds,
      headSilenceSeconds: this.headFrames / fs,
      tailSilenceSeconds: tailFrames / fs,
      allSilent,
      longestInternalGapSeconds: this.longestGapFrames / fs,
      longestInternalGapStartFrame: this.longestGapStart,
      channels,
      all: totals(n),
      events: this.log.events,
      eventsTotal: this.log.total,
      eventsTruncated: this.log.truncated,
    };
    return this.finished;
  }
}
