// Clipping: runs of at least minRunSamples consecutive samples of the same polarity with |x| >= threshold.
// Same polarity because a clipped waveform flattens on one side; an alternating full-scale signal
// (e.g. a test tone at fs/2) is not clipped. Runs are tracked across block boundaries per channel.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from './envelope.ts';
import { byEndThenChannel, EventLog, type EventList, type FoundEvent } from './events.ts';
import { amplitudeToDb, dbToAmplitude } from './units.ts';
import { EarmarkError } from '../errors/index.ts';

/** Within 0.01 dB of full scale (common practice). */
export const DEFAULT_CLIP_THRESHOLD_DBFS = -0.01;
/** Three consecutive samples (common practice; no standard fixes the number). */
export const DEFAULT_MIN_RUN_SAMPLES = 3;

export interface ClippingMeterOptions {
  minRunSamples?: number;
  /** Linear threshold on |x|; wins over thresholdDbfs. */
  thresholdLinear?: number;
  thresholdDbfs?: number;
  maxEvents?: number;
}

export interface ChannelClipping {
  channel: number;
  runs: number;
  /** Samples inside counted runs. */
  clippedSamples: number;
  longestRunSamples: number;
}

/** Events: one 'clipping' per run, peakValue in dBFS; ordered by end, then channel. */
export interface ClippingResult extends EventList {
  thresholdLinear: number;
  minRunSamples: number;
  channels: ChannelClipping[];
  totalRuns: number;
  totalClippedSamples: number;
}

export class ClippingMeter implements Meter<ClippingResult> {
  private readonly threshold: number;
  private readonly minRun: number;
  private readonly log: EventLog;
  // Open run per channel: polarity (0 none), start frame, peak |x|.
  private readonly runSign: Int8Array;
  private readonly runStart: Float64Array;
  private readonly runPeak: Float64Array;
  private readonly runs: Float64Array;
  private readonly clipped: Float64Array;
  private readonly longest: Float64Array;
  private readonly pending: FoundEvent[] = [];
  private frames = 0;
  private finished: ClippingResult | null = null;
  private readonly envelopes = new EnvelopeBuilder();

  constructor(
    private readonly info: StreamInfo,
    options: ClippingMeterOptions = {},
  ) {
    this.threshold = options.thresholdLinear ?? dbToAmplitude(options.thresholdDbfs ?? DEFAULT_CLIP_THRESHOLD_DBFS);
    this.minRun = options.minRunSamples ?? DEFAULT_MIN_RUN_SAMPLES;
    if (!(this.threshold > 0) || !Number.isInteger(this.minRun) || this.minRun < 1) {
      throw new EarmarkError('invalid_argument', 'Clipping threshold must be > 0 and minRunSamples an integer >= 1', {
        field: 'clipping',
      });
    }
    this.log = new EventLog(info.sampleRate, options.maxEvents);
    const n = info.channels;
    this.runSign = new Int8Array(n);
    this.runStart = new Float64Array(n);
    this.runPeak = new Float64Array(n);
    this.runs = new Float64Array(n);
    this.clipped = new Float64Array(n);
    this.longest = new Float64Array(n);
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    const base = this.frames;
    const thr = this.threshold;
    const envelope = this.envelopes.of(block);
    for (let c = 0; c < this.info.channels; c++) {
      const x = block.channelData[c];
      const chunkMax = envelope.maxAbs[c];
      let sign = this.runSign[c];
      let start = this.runStart[c];
      let peak = this.runPeak[c];
      for (let k = 0, from = 0; from < frames; k++, from += ENVELOPE_CHUNK_FRAMES) {
        // A chunk wholly below the threshold with no run open changes nothing (almost every chunk).
        if (sign === 0 && chunkMax[k] < thr) continue;
        const to = Math.min(from + ENVELOPE_CHUNK_FRAMES, frames);
        for (let i = from; i < to; i++) {
          const v = x[i];
          const a = Math.abs(v);
          if (a < thr) {
            if (sign !== 0) {
              this.close(c, start, base + i, peak);
              sign = 0;
            }
            continue;
          }
          const s = v > 0 ? 1 : -1;
          if (s !== sign) {
            if (sign !== 0) this.close(c, start, base + i, peak);
            sign = s;
            start = base + i;
            peak = a;
          } else if (a > peak) {
            peak = a;
          }
        }
      }
      this.runSign[c] = sign;
      this.runStart[c] = start;
      this.runPeak[c] = peak;
    }
    this.frames = base + frames;
    this.flushPending();
  }

  result(): ClippingResult {
    if (this.finished) return this.finished;
    for (let c = 0; c < this.info.channels; c++) {
      if (this.runSign[c] !== 0) this.close(c, this.runStart[c], this.frames, this.runPeak[c]);
      this.runSign[c] = 0;
    }
    this.flushPending();
    const channels: ChannelClipping[] = [];
    let totalRuns = 0;
    let totalClipped = 0;
    for (let c = 0; c < this.info.channels; c++) {
      channels.push({
        channel: c,
        runs: this.runs[c],
        clippedSamples: this.clipped[c],
        longestRunSamples: this.longest[c],
      });
      totalRuns += this.runs[c];
      totalClipped += this.clipped[c];
    }
    this.finished = {
      thresholdLinear: this.threshold,
      minRunSamples: this.minRun,
      channels,
      totalRuns,
      totalClippedSamples: totalClipped,
      ...this.log.list(),
    };
    return this.finished;
  }

  private close(channel: number, startFrame: number, endFrame: number, peak: number): void {
    const length = endFrame - startFrame;
    if (length < this.minRun) return;
    this.runs[channel]++;
    this.clipped[channel] += length;
    if (length > this.longest[channel]) this.longest[channel] = length;
    this.pending.push({
      kind: 'clipping',
      channel,
      startFrame,
      endFrame,
      peakValue: amplitudeToDb(peak) ?? undefined,
      count: length,
    });
  }

  /** Channels are scanned one after another inside a block; ordering by end frame keeps the
   * event list (and what the cap keeps) independent of how the stream was cut. */
  private flushPending(): void {
    if (this.pending.length === 0) return;
    this.pending.sort(byEndThenChannel);
    for (const event of this.pending) this.log.add(event);
    this.pending.length = 0;
  }
}
