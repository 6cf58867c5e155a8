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
//   The bound is checked per 32-frame chunk, from the shared block envelope (envelope.ts), and
//   first over a whole 16384-frame piece, which then skips the kernel call and its copy.
// A WebAssembly SIMD kernel (kernels/true-peak.wat) runs the chunk loop and the interpolation: a
// float32 pass, four frames a vector, with a proven error margin finds the frames that may beat
// the gate, and only those get the float64 arithmetic above, in its order, so every reading is
// the scalar loop's to the bit. On a limited master most frames sit under the ceiling but near it,
// where no bound from max|x| can skip them.
// A reconstructed waveform passes through its own samples, so the reading is never below the
// sample peak (the example filter's passband ripple would otherwise under-read by ~0.2 dB).

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from './envelope.ts';
import type { EventList } from './events.ts';
import { OverLog } from './overs.ts';
import { amplitudeToDb, dbToAmplitude } from './units.ts';
import {
  TRUE_PEAK_HISTORY_FRAMES,
  TRUE_PEAK_KERNEL_FRAMES,
  TRUE_PEAK_SLOT as SLOT,
  TruePeakKernel,
} from './kernels/true-peak.ts';

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
if (HISTORY !== TRUE_PEAK_HISTORY_FRAMES || ENVELOPE_CHUNK_FRAMES !== 32)
  throw new Error('the true-peak kernel assumes an 11-frame history and 32-frame chunks');

const sumAbs = (h: number[]) => h.reduce((s, v) => s + Math.abs(v), 0);
/** Largest possible |y| per unit of max|x|: the bound used for exact pruning. */
export const ANNEX2_GAIN_BOUND = Math.max(sumAbs(ANNEX2_PHASE0), sumAbs(ANNEX2_PHASE1));
// The kernel's float32 screening margin (true-peak.wat) assumes a gain bound below 4.
if (ANNEX2_GAIN_BOUND >= 4) throw new Error('the true-peak screening margin assumes a gain bound below 4');

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
  private readonly maxima: Float64Array;
  private readonly maxFrame: Float64Array;
  private readonly history: Float32Array[];
  /** max |x| of each channel's HISTORY samples carried from the previous block. */
  private readonly historyMax: Float64Array;
  private readonly envelopes = new EnvelopeBuilder();
  private readonly overLog: OverLog;
  private readonly kernel: TruePeakKernel;
  private position = 0;
  private pruned = 0;

  constructor(info: StreamInfo, options: TruePeakOptions = {}) {
    this.channels = info.channels;
    this.sampleRate = info.sampleRate;
    this.ceilingDbtp = options.overCeilingDbtp ?? -1;
    this.ceilingLinear = dbToAmplitude(this.ceilingDbtp);
    const mergeFrames = Math.round((options.overMergeSeconds ?? 0.05) * info.sampleRate);
    this.maxima = new Float64Array(info.channels);
    this.maxFrame = new Float64Array(info.channels);
    this.history = Array.from({ length: info.channels }, () => new Float32Array(HISTORY));
    this.historyMax = new Float64Array(info.channels);
    this.overLog = new OverLog('true_peak_over', info.channels, info.sampleRate, mergeFrames, options.maxEvents);
    // Halved (exact: a power of two), so |S| + |D| is already max(|y0|, |y3|).
    const pairs = (h: number[], sign: number) =>
      Float64Array.from({ length: 6 }, (_, k) => 0.5 * (h[k] + sign * h[TAPS - 1 - k]));
    this.kernel = new TruePeakKernel({
      s0: pairs(ANNEX2_PHASE0, 1),
      d0: pairs(ANNEX2_PHASE0, -1),
      s1: pairs(ANNEX2_PHASE1, 1),
      d1: pairs(ANNEX2_PHASE1, -1),
      ceiling: this.ceilingLinear,
      gainBound: ANNEX2_GAIN_BOUND,
      // A negative merge distance keeps overs apart.
      extendRuns: mergeFrames >= 0,
    });
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    if (frames === 0) return;
    const envelope = this.envelopes.of(block);
    for (let c = 0; c < this.channels; c++) {
      const x = block.channelData[c];
      const history = this.history[c];
      this.scanPieces(c, x, history, envelope.maxAbs[c], frames);
      if (frames >= HISTORY) history.set(x.subarray(frames - HISTORY, frames));
      else {
        history.copyWithin(0, frames);
        history.set(x.subarray(0, frames), HISTORY - frames);
      }
      this.historyMax[c] = absMax(history, 0, HISTORY);
    }
    this.position += frames;
  }

  /** The block in kernel pieces (whole chunks); the kernel keeps the per-chunk order of the scan. */
  private scanPieces(channel: number, x: Float32Array, history: Float32Array, chunkMax: Float32Array, frames: number) {
    const kernel = this.kernel,
      state = kernel.state;
    // max |x| of the taps before the piece: the history, then the previous piece's last chunk.
    let before = this.historyMax[channel];
    for (let from = 0; from < frames; from += TRUE_PEAK_KERNEL_FRAMES) {
      const n = Math.min(TRUE_PEAK_KERNEL_FRAMES, frames - from);
      const chunk0 = from / ENVELOPE_CHUNK_FRAMES,
        chunkEnd = chunk0 + Math.ceil(n / ENVELOPE_CHUNK_FRAMES);
      let pieceMax = 0;
      for (let k = chunk0; k < chunkEnd; k++) if (chunkMax[k] > pieceMax) pieceMax = chunkMax[k];
      // A skipped piece changes nothing else: the bound's gain exceeds 1, so a chunk whose sample
      // peak beats the running maximum is never skipped.
      if (!this.mayExceed(Math.max(before, pieceMax), channel)) {
        this.pruned += n;
        before = chunkMax[chunkEnd - 1];
        continue;
      }
      if (from === 0) kernel.input.set(history, 0);
      else kernel.input.set(x.subarray(from - HISTORY, from), 0);
      kernel.input.set(x.subarray(from, from + n), HISTORY);
      kernel.chunkMax.set(chunkMax.subarray(chunk0, chunkEnd));
      state[SLOT.maximum] = this.maxima[channel];
      state[SLOT.maximumFrame] = this.maxFrame[channel];
      state[SLOT.historyMax] = before;
      state[SLOT.pruned] = this.pruned;
      const at = this.position + from;
      state[SLOT.position] = at;
      const runs = kernel.scan(n);
      for (let i = 0; i < runs; i++) {
        const first = at + kernel.runFirst[i],
          last = at + kernel.runLast[i];
        this.overLog.recordRun(
          channel,
          this.reported(first),
          this.reported(last),
          last - first + 1,
          kernel.runPeaks[i],
        );
      }
      this.maxima[channel] = state[SLOT.maximum];
      this.maxFrame[channel] = state[SLOT.maximumFrame];
      this.pruned = state[SLOT.pruned];
      before = state[SLOT.historyMax];
    }
  }

  /** Whether interpolated values from taps with this max |x| can beat the running maximum or the ceiling. */
  private mayExceed(tapMax: number, channel: number): boolean {
    const bound = tapMax * ANNEX2_GAIN_BOUND;
    return bound > this.maxima[channel] || bound > this.ceilingLinear;
  }

  /** The frame an interpolated value is reported at: back by the filter delay. */
  private reported(frame: number): number {
    return Math.max(0, frame - FILTER_DELAY_FRAMES);
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
