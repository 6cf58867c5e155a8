// True peak per ITU-R BS.1770-5 Annex 2: 4x oversampling with the Annex's 48-tap polyphase
// interpolation filter, absolute value, maximum. We oversample 4x at every rate (the Annex
// allows 2x at 96 kHz; 4x is never less accurate).
//
// Speed comes from two exact tricks, not approximations:
// - The filter is linear-phase: phase 3 is phase 0 reversed and phase 2 is phase 1 reversed.
//   With S = y0 + y3 and D = y0 - y3, max(|y0|, |y3|) = (|S| + |D|) / 2, and S, D need only
//   six multiplies each on pre-added tap pairs.
// - A span of samples whose interpolated values provably cannot exceed both the running
//   maximum and the over ceiling is skipped: |y| <= max|x over the taps| * max_p sum|h_p|.
//   The bound is checked per 32-frame chunk, from the shared block envelope (envelope.ts).
// The kernel loads its 12 taps per output (fewer register spills than sliding them through
// locals) and tests one gate per sample;
// it runs at the scalar floating-point throughput (V8 does not vectorise).
// A reconstructed waveform passes through its own samples, so the reading is never below the
// sample peak (the example filter's passband ripple would otherwise under-read by ~0.2 dB).

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from './envelope.ts';
import type { EventList } from './events.ts';
import { OverLog } from './overs.ts';
import { amplitudeToDb, dbToAmplitude } from './units.ts';

/** BS.1770-5 Annex 2, section 3: phase 0 and phase 1 of the example filter. */
export const ANNEX2_PHASE0 = [
  0.001708984375, 0.010986328125, -0.0196533203125, 0.033203125, -0.0594482421875, 0.1373291015625, 0.97216796875,
  -0.102294921875, 0.047607421875, -0.026611328125, 0.014892578125, -0.00830078125,
];
export const ANNEX2_PHASE1 = [
  -0.0291748046875, 0.029296875, -0.0517578125, 0.089111328125, -0.16650390625, 0.465087890625, 0.77978515625,
  -0.2003173828125, 0.1015625, -0.0582275390625, 0.0330810546875, -0.0189208984375,
];
const TAPS = 12;
const HISTORY = TAPS - 1;
/** Input samples between an interpolated value and the input sample that completes it. */
const FILTER_DELAY_FRAMES = 6;
// A chunk's taps lie in it and the chunk before only if a chunk is at least HISTORY frames long.
if (ENVELOPE_CHUNK_FRAMES < HISTORY) throw new Error('envelope chunks are shorter than the filter history');

const sumAbs = (h: number[]) => h.reduce((s, v) => s + Math.abs(v), 0);
/** Largest possible |y| per unit of max|x|: the bound used for exact pruning. */
export const ANNEX2_GAIN_BOUND = Math.max(sumAbs(ANNEX2_PHASE0), sumAbs(ANNEX2_PHASE1));

/** max |x[i]| for i in [from, to). One lane: V8 compiles this tighter than unrolled lanes. */
function absMax(x: Float32Array, from: number, to: number): number {
  let m = 0;
  for (let i = from; i < to; i++) {
    const a = Math.abs(x[i]);
    if (a > m) m = a;
  }
  return m;
}

export interface TruePeakOptions {
  /** Interpolated values above this ceiling become 'true_peak_over' events. */
  overCeilingDbtp?: number;
  /** Overs closer than this merge into one event. */
  overMergeSeconds?: number;
  maxEvents?: number;
}

/** Over events ('true_peak_over', merged; by start, then channel) in `events`. */
export interface TruePeakResult extends EventList {
  /** Per channel, dBTP; null for digital silence. */
  channelTruePeakDbtp: (number | null)[];
  truePeakDbtp: number | null;
  /** Time (s) of the programme's true peak, to the input sample. */
  truePeakAtSeconds: number | null;
  overCeilingDbtp: number;
  /** Input samples whose interpolation was skipped by the exact bound (for benchmarks). */
  prunedFrames: number;
}

export class TruePeakMeter implements Meter<TruePeakResult> {
  private readonly channels: number;
  private readonly sampleRate: number;
  private readonly ceilingLinear: number;
  private readonly ceilingDbtp: number;
  private readonly mergeFrames: number;
  private readonly maxima: Float64Array;
  private readonly maxFrame: Float64Array;
  private readonly history: Float32Array[];
  /** max |x| of each channel's HISTORY samples carried from the previous block. */
  private readonly historyMax: Float64Array;
  /** The previous block's last HISTORY samples, then this block's first chunk. */
  private readonly head = new Float32Array(HISTORY + ENVELOPE_CHUNK_FRAMES);
  private readonly envelopes = new EnvelopeBuilder();
  private readonly overLog: OverLog;
  private readonly s0: Float64Array;
  private readonly d0: Float64Array;
  private readonly s1: Float64Array;
  private readonly d1: Float64Array;
  private position = 0;
  private pruned = 0;

  constructor(info: StreamInfo, options: TruePeakOptions = {}) {
    this.channels = info.channels;
    this.sampleRate = info.sampleRate;
    this.ceilingDbtp = options.overCeilingDbtp ?? -1;
    this.ceilingLinear = dbToAmplitude(this.ceilingDbtp);
    this.mergeFrames = Math.round((options.overMergeSeconds ?? 0.05) * info.sampleRate);
    this.maxima = new Float64Array(info.channels);
    this.maxFrame = new Float64Array(info.channels);
    this.history = Array.from({ length: info.channels }, () => new Float32Array(HISTORY));
    this.historyMax = new Float64Array(info.channels);
    this.overLog = new OverLog('true_peak_over', info.channels, info.sampleRate, this.mergeFrames, options.maxEvents);
    // Halved (exact: a power of two), so |S| + |D| is already max(|y0|, |y3|).
    const pairs = (h: number[], sign: number) =>
      Float64Array.from({ length: 6 }, (_, k) => 0.5 * (h[k] + sign * h[TAPS - 1 - k]));
    this.s0 = pairs(ANNEX2_PHASE0, 1);
    this.d0 = pairs(ANNEX2_PHASE0, -1);
    this.s1 = pairs(ANNEX2_PHASE1, 1);
    this.d1 = pairs(ANNEX2_PHASE1, -1);
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    if (frames === 0) return;
    const envelope = this.envelopes.of(block);
    const head = this.head;
    for (let c = 0; c < this.channels; c++) {
      const x = block.channelData[c];
      const history = this.history[c];
      // Only the first chunk's taps reach into the previous block: it alone reads a joined copy.
      head.set(history, 0);
      head.set(x.subarray(0, Math.min(frames, ENVELOPE_CHUNK_FRAMES)), HISTORY);
      this.scanChunks(c, x, envelope.maxAbs[c], frames);
      if (frames >= HISTORY) history.set(x.subarray(frames - HISTORY, frames));
      else history.set(head.subarray(frames, frames + HISTORY));
      this.historyMax[c] = absMax(history, 0, HISTORY);
    }
    this.position += frames;
  }

  /** The block's chunks in order; `head` holds HISTORY samples before frame 0 and the first chunk. */
  private scanChunks(channel: number, x: Float32Array, chunkMax: Float32Array, frames: number): void {
    // max |x| of the taps before the chunk: the history, then the previous chunk.
    let before = this.historyMax[channel];
    for (let k = 0, from = 0; from < frames; k++, from += ENVELOPE_CHUNK_FRAMES) {
      const to = Math.min(from + ENVELOPE_CHUNK_FRAMES, frames);
      const sampleMax = chunkMax[k];
      if (sampleMax > this.maxima[channel]) {
        let at = from;
        while (Math.abs(x[at]) !== sampleMax) at++;
        this.maxima[channel] = sampleMax;
        this.maxFrame[channel] = this.position + at;
      }
      if (!this.mayExceed(Math.max(before, sampleMax), channel)) this.pruned += to - from;
      // Taps of frame f: head[f .. f + HISTORY] in the first chunk, x[f - HISTORY .. f] after it.
      else if (k === 0) this.interpolateSpan(channel, this.head, 0, from, to);
      else this.interpolateSpan(channel, x, -HISTORY, from, to);
      before = sampleMax;
    }
  }

  /** Whether interpolated values from taps with this max |x| can beat the running maximum or the ceiling. */
  private mayExceed(tapMax: number, channel: number): boolean {
    const bound = tapMax * ANNEX2_GAIN_BOUND;
    return bound > this.maxima[channel] || bound > this.ceilingLinear;
  }

  /** Frames [start, end): the taps of frame f are taps[f + offset .. f + offset + HISTORY]. */
  private interpolateSpan(channel: number, taps: Float32Array, offset: number, start: number, end: number): void {
    const { s0, d0, s1, d1 } = this;
    const s00 = s0[0],
      s01 = s0[1],
      s02 = s0[2],
      s03 = s0[3],
      s04 = s0[4],
      s05 = s0[5];
    const d00 = d0[0],
      d01 = d0[1],
      d02 = d0[2],
      d03 = d0[3],
      d04 = d0[4],
      d05 = d0[5];
    const s10 = s1[0],
      s11 = s1[1],
      s12 = s1[2],
      s13 = s1[3],
      s14 = s1[4],
      s15 = s1[5];
    const d10 = d1[0],
      d11 = d1[1],
      d12 = d1[2],
      d13 = d1[3],
      d14 = d1[4],
      d15 = d1[5];
    const ceiling = this.ceilingLinear;
    let max = this.maxima[channel],
      maxAt = -1;
    // One test per sample: either a new maximum or an over is rare.
    let gate = Math.min(max, ceiling);
    for (let n = start, t = start + offset; n < end; n++, t++) {
      // Twelve loads per output beat sliding the taps through locals: fewer register spills.
      const x0 = taps[t],
        x1 = taps[t + 1],
        x2 = taps[t + 2],
        x3 = taps[t + 3],
        x4 = taps[t + 4],
        x5 = taps[t + 5];
      const x6 = taps[t + 6],
        x7 = taps[t + 7],
        x8 = taps[t + 8],
        x9 = taps[t + 9],
        x10 = taps[t + 10],
        x11 = taps[t + 11];
      const a0 = x11 + x0,
        b0 = x11 - x0;
      const a1 = x10 + x1,
        b1 = x10 - x1;
      const a2 = x9 + x2,
        b2 = x9 - x2;
      const a3 = x8 + x3,
        b3 = x8 - x3;
      const a4 = x7 + x4,
        b4 = x7 - x4;
      const a5 = x6 + x5,
        b5 = x6 - x5;
      const even =
        Math.abs(s00 * a0 + s01 * a1 + s02 * a2 + s03 * a3 + s04 * a4 + s05 * a5) +
        Math.abs(d00 * b0 + d01 * b1 + d02 * b2 + d03 * b3 + d04 * b4 + d05 * b5);
      const odd =
        Math.abs(s10 * a0 + s11 * a1 + s12 * a2 + s13 * a3 + s14 * a4 + s15 * a5) +
        Math.abs(d10 * b0 + d11 * b1 + d12 * b2 + d13 * b3 + d14 * b4 + d15 * b5);
      // Three tests that are almost never true predict well; picking the largest of the three
      // first would branch at random (about a third slower).
      const ax = Math.abs(x11);
      if (even > gate || odd > gate || ax > gate) {
        const peak = even > odd ? (even > ax ? even : ax) : odd > ax ? odd : ax;
        if (peak > max) {
          max = peak;
          maxAt = n;
        }
        if (peak > ceiling) this.recordOver(channel, this.position + n, peak);
        gate = Math.min(max, ceiling);
      }
    }
    if (maxAt >= 0) {
      this.maxima[channel] = max;
      this.maxFrame[channel] = Math.max(0, this.position + maxAt - FILTER_DELAY_FRAMES);
    }
  }

  private recordOver(channel: number, frame: number, peak: number): void {
    this.overLog.record(channel, Math.max(0, frame - FILTER_DELAY_FRAMES), peak);
  }

  result(): TruePeakResult {
    const overs = this.overLog.finish();
    let best = -1;
    for (let c = 0; c < this.channels; c++) if (best < 0 || this.maxima[c] > this.maxima[best]) best = c;
    const programme = best >= 0 ? this.maxima[best] : 0;
    return {
      channelTruePeakDbtp: Array.from(this.maxima, amplitudeToDb),
      truePeakDbtp: amplitudeToDb(programme),
      truePeakAtSeconds: programme > 0 ? this.maxFrame[best] / this.sampleRate : null,
      overCeilingDbtp: this.ceilingDbtp,
      ...overs,
      prunedFrames: this.pruned,
    };
  }
}
