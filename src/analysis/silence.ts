// Silence: regions where every sample has |x| below the threshold for at least minDurationSeconds.
// The decision is per sample (no averaging window), so region bounds are sample-exact and a single
// sample at or above the threshold ends a region. Per channel, and for all channels together
// (a frame is silent when all its samples are). Head/tail/longest internal gap use the all-channel
// runs of any length (internal gaps from MIN_GAP_SECONDS); events only cover runs of at least the
// minimum duration.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from './envelope.ts';
import { byEndThenChannel, EventLog, type EventList, type FoundEvent } from './events.ts';
import { amplitudeToDb, dbToAmplitude } from './units.ts';
import { EarmarkError } from '../errors/index.ts';

/** ffmpeg silencedetect defaults (common practice): -60 dB for 2 s. */
export const DEFAULT_SILENCE_THRESHOLD_DBFS = -60;
export const DEFAULT_SILENCE_MIN_SECONDS = 2;
/** Our definition: an all-channel run shorter than 1 ms between sounding samples is the waveform
 * crossing zero, not a gap, so it never becomes the longest internal gap. */
export const MIN_GAP_SECONDS = 0.001;

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

/** Events: 'silence', channel null for all channels; peakValue = loudest sample in dBFS, absent if digital silence. */
export interface SilenceResult extends EventList {
  thresholdDbfs: number;
  minDurationSeconds: number;
  /** All channels silent from the first frame on (any length, 0 when the first frame carries signal). */
  headSilenceSeconds: number;
  /** All channels silent up to the last frame (any length). */
  tailSilenceSeconds: number;
  /** Every frame of the stream is silent (then head = tail = duration). */
  allSilent: boolean;
  /** Longest all-channel silent run with signal on both sides, of at least MIN_GAP_SECONDS; 0 when none. */
  longestInternalGapSeconds: number;
  longestInternalGapStartFrame: number | null;
  channels: Array<SilenceTotals & { channel: number }>;
  all: SilenceTotals;
}

export class SilenceMeter implements Meter<SilenceResult> {
  private readonly thresholdDbfs: number;
  private readonly threshold: number;
  private readonly minDurationSeconds: number;
  private readonly minFrames: number;
  private readonly minGapFrames: number;
  private readonly log: EventLog;
  // Open run per channel (start -1 = none); index n is the all-channel run.
  private readonly runStart: Float64Array;
  private readonly runPeak: Float64Array;
  private readonly regions: Float64Array;
  private readonly silentFrames: Float64Array;
  private readonly pending: FoundEvent[] = [];
  // This block's silent runs per channel (channel c at c * runCap) and their intersection;
  // sized for the largest block seen, once.
  private runCap = 0;
  private blockRuns: Int32Array;
  private blockRunStart = new Float64Array(0);
  private blockRunEnd = new Float64Array(0);
  private meetStart = [new Float64Array(0), new Float64Array(0)];
  private meetEnd = [new Float64Array(0), new Float64Array(0)];
  private meetIndex = 0;
  private headFrames = 0;
  private headOpen = true;
  private longestGapFrames = 0;
  private longestGapStart: number | null = null;
  private frames = 0;
  private finished: SilenceResult | null = null;
  private readonly envelopes = new EnvelopeBuilder();

  constructor(
    private readonly info: StreamInfo,
    options: SilenceMeterOptions = {},
  ) {
    this.thresholdDbfs = options.thresholdDbfs ?? DEFAULT_SILENCE_THRESHOLD_DBFS;
    this.threshold = dbToAmplitude(this.thresholdDbfs);
    this.minDurationSeconds = options.minDurationSeconds ?? DEFAULT_SILENCE_MIN_SECONDS;
    if (!Number.isFinite(this.thresholdDbfs) || !(this.minDurationSeconds >= 0)) {
      throw new EarmarkError('invalid_argument', 'Silence threshold must be finite and minDurationSeconds >= 0', {
        field: 'silence',
      });
    }
    this.minFrames = Math.max(1, Math.round(this.minDurationSeconds * info.sampleRate));
    this.minGapFrames = Math.max(1, Math.round(MIN_GAP_SECONDS * info.sampleRate));
    this.log = new EventLog(info.sampleRate, options.maxEvents);
    const slots = info.channels + 1;
    // Each channel starts inside an empty run, so a silent head is ended like any continued run.
    this.runStart = new Float64Array(slots).fill(-1).fill(0, 0, info.channels);
    this.runPeak = new Float64Array(slots);
    this.regions = new Float64Array(slots);
    this.silentFrames = new Float64Array(slots);
    this.blockRuns = new Int32Array(info.channels);
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    const base = this.frames;
    const thr = this.threshold;
    const n = this.info.channels;
    // A block of f frames holds at most ceil(f / 2) silent runs per channel.
    const cap = (frames >> 1) + 2;
    if (this.runCap < cap) this.allocateRuns(cap);
    const envelope = this.envelopes.of(block);
    // A run inside the block that is shorter than the minimum and no longer than the longest gap
    // so far can neither raise an event nor a longer gap (all-channel runs lie inside it): the
    // intersection below skips it. Noisy quiet passages make thousands of such one-sample runs.
    const keepFrames = Math.min(this.minFrames, Math.max(this.longestGapFrames + 1, this.minGapFrames));
    // Once that holds for every run shorter than a chunk, a chunk needs only its two ends.
    const edgesOnly = keepFrames > ENVELOPE_CHUNK_FRAMES;
    for (let c = 0; c < n; c++) {
      const x = block.channelData[c];
      const chunkMax = envelope.maxAbs[c],
        chunkMin = envelope.minAbs[c];
      const off = c * this.runCap;
      let count = 0;
      let start = this.runStart[c];
      let peak = this.runPeak[c];
      for (let k = 0, from = 0; from < frames; k++, from += ENVELOPE_CHUNK_FRAMES) {
        // Chunks that cannot start or end a run are decided by their extremes alone.
        if (start < 0 ? chunkMin[k] >= thr : chunkMax[k] < thr) {
          if (start >= 0 && chunkMax[k] > peak) peak = chunkMax[k];
          continue;
        }
        const to = Math.min(from + ENVELOPE_CHUNK_FRAMES, frames);
        if (edgesOnly) {
          // End the run the chunk continues at its first loud sample (the chunk has one) ...
          let i = from;
          if (start >= 0) {
            for (; i < to; i++) {
              const a = Math.abs(x[i]);
              if (a >= thr) break;
              if (a > peak) peak = a;
            }
            count = this.endRun(c, start, base + i, peak, base, keepFrames, off, count);
            start = -1;
            i++;
          }
          // ... and open one at the silent stretch it ends with, if any.
          let j = to,
            tail = 0;
          for (; j > i; j--) {
            const a = Math.abs(x[j - 1]);
            if (a >= thr) break;
            if (a > tail) tail = a;
          }
          if (j < to) {
            start = base + j;
            peak = tail;
          }
          continue;
        }
        for (let i = from; i < to; i++) {
          const a = Math.abs(x[i]);
          if (a < thr) {
            if (start < 0) {
              start = base + i;
              peak = 0;
            }
            if (a > peak) peak = a;
          } else if (start >= 0) {
            count = this.endRun(c, start, base + i, peak, base, keepFrames, off, count);
            start = -1;
          }
        }
      }
      if (start >= 0) {
        this.blockRunStart[off + count] = start > base ? start : base;
        this.blockRunEnd[off + count++] = base + frames;
      }
      this.blockRuns[c] = count;
      this.runStart[c] = start;
      this.runPeak[c] = peak;
    }
    this.scanAllChannels(block, this.intersectRuns(), base);
    this.frames = base + frames;
    this.flushPending();
  }

  /** Closes a channel's run at a loud sample; keeps it for the all-channel intersection if it can matter there. */
  private endRun(
    c: number,
    start: number,
    end: number,
    peak: number,
    base: number,
    keepFrames: number,
    off: number,
    count: number,
  ): number {
    if (start <= base || end - start >= keepFrames) {
      this.blockRunStart[off + count] = start > base ? start : base;
      this.blockRunEnd[off + count++] = end;
    }
    this.close(c, start, end, peak);
    return count;
  }

  private allocateRuns(cap: number): void {
    const n = this.info.channels;
    this.runCap = cap;
    this.blockRunStart = new Float64Array(n * cap);
    this.blockRunEnd = new Float64Array(n * cap);
    this.meetStart = [new Float64Array(cap), new Float64Array(cap)];
    this.meetEnd = [new Float64Array(cap), new Float64Array(cap)];
  }

  /** All-channel silent runs of this block = intersection of the channels' runs (no per-frame pass). */
  private intersectRuns(): number {
    const cap = this.runCap;
    let idx = 0;
    let count = this.blockRuns[0];
    this.meetStart[0].set(this.blockRunStart.subarray(0, count));
    this.meetEnd[0].set(this.blockRunEnd.subarray(0, count));
    for (let c = 1; c < this.info.channels && count > 0; c++) {
      const off = c * cap;
      const other = this.blockRuns[c];
      const inStart = this.meetStart[idx];
      const inEnd = this.meetEnd[idx];
      const outStart = this.meetStart[1 - idx];
      const outEnd = this.meetEnd[1 - idx];
      let k = 0;
      let i = 0;
      let j = 0;
      while (i < count && j < other) {
        const s = Math.max(inStart[i], this.blockRunStart[off + j]);
        const e = Math.min(inEnd[i], this.blockRunEnd[off + j]);
        if (s < e) {
          outStart[k] = s;
          outEnd[k++] = e;
        }
        if (inEnd[i] < this.blockRunEnd[off + j]) i++;
        else j++;
      }
      idx = 1 - idx;
      count = k;
    }
    this.meetIndex = idx;
    return count;
  }

  private scanAllChannels(block: PcmBlock, count: number, base: number): void {
    const slot = this.info.channels;
    const end = base + block.frames;
    const starts = this.meetStart[this.meetIndex];
    const ends = this.meetEnd[this.meetIndex];
    let open = this.runStart[slot];
    let peak = this.runPeak[slot];
    let cursor = base;
    for (let k = 0; k < count; k++) {
      const s = starts[k];
      const e = ends[k];
      if (s > cursor) {
        if (open >= 0) this.closeAll(open, cursor, peak);
        open = -1;
        this.headOpen = false;
      }
      if (open < 0) {
        open = s;
        peak = 0;
      }
      // Loudest sample of the region: rescans only silent stretches.
      for (let c = 0; c < slot; c++) {
        const x = block.channelData[c];
        for (let i = s - base; i < e - base; i++) peak = Math.max(peak, Math.abs(x[i]));
      }
      cursor = e;
      if (e < end) {
        this.closeAll(open, e, peak);
        open = -1;
        this.headOpen = false;
      }
    }
    if (cursor < end) {
      if (open >= 0) this.closeAll(open, cursor, peak);
      open = -1;
      this.headOpen = false;
    }
    this.runStart[slot] = open;
    this.runPeak[slot] = peak;
  }

  private closeAll(startFrame: number, endFrame: number, peak: number): void {
    if (startFrame === 0) {
      this.headFrames = endFrame;
    } else if (endFrame - startFrame > this.longestGapFrames && endFrame - startFrame >= this.minGapFrames) {
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
    const event: FoundEvent = {
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
      ...this.log.list(),
    };
    return this.finished;
  }
}
