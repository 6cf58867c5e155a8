// The reconstructed peak meter's JavaScript loops as they were before its WebAssembly kernel,
// kept as the baseline the optimised meter must equal to the bit (readings, overs). The design,
// its error budget and the pruning bounds are described in src/analysis/reconstructed-peak.ts.

import type { Meter, PcmBlock, StreamInfo } from '../../../src/analysis/audio.ts';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from '../../../src/analysis/envelope.ts';
import { OverLog } from '../../../src/analysis/overs.ts';
import {
  HALF_SAMPLE_TAPS, RECONSTRUCTION_GAIN_BOUND, RECONSTRUCTION_OVERSAMPLING, REFINEMENT_CAP, STAGE2_HALF_WIDTH, quarterPhaseTaps,
  type ReconstructedPeakOptions, type ReconstructedPeakResult,
} from '../../../src/analysis/reconstructed-peak.ts';

// The filter design is the meter's own (unchanged by the kernel); only the loops are the old ones.
const STAGE1 = Float64Array.from(HALF_SAMPLE_TAPS);
/** The same taps in input order, x[m - 15] .. x[m + 16]. */
const STAGE1_FULL = Float64Array.from([...HALF_SAMPLE_TAPS].reverse().concat(HALF_SAMPLE_TAPS));
/** Bound on a frame's reading per unit max|x|; the margin covers rounding in the sums. */
const PRUNE_GAIN = RECONSTRUCTION_GAIN_BOUND * REFINEMENT_CAP * (1 + 1e-9);
/** The same bound from max |z| over stage 2's taps, once stage 1 is known. */
const STAGE2_PRUNE_GAIN = Math.max(...[1, 2, 3].map((q) => quarterPhaseTaps(q).reduce((s, v) => s + Math.abs(v), 0))) * REFINEMENT_CAP * (1 + 1e-9);
/** cap * value <= gate for every value <= gate * this (the margin covers rounding). */
const INVERSE_CAP = (1 - 1e-12) / REFINEMENT_CAP;

/** Input frames after a grid frame that its values need (stage 1: 16, stage 2: 2). */
const LATENCY_FRAMES = 18;
/** Input frames kept before each block: back to the taps of the previous frame's last grid value. */
const HISTORY = 2 * LATENCY_FRAMES;
// A chunk's taps lie in it, the chunk before and the one before that.
if (ENVELOPE_CHUNK_FRAMES * 2 < HISTORY) throw new Error('envelope chunks are shorter than the filter history');

function absMax(x: Float64Array, from: number, to: number): number {
  let m = 0;
  for (let i = from; i < to; i++) {
    const a = Math.abs(x[i]);
    if (a > m) m = a;
  }
  return m;
}

export class ReconstructedPeakMeter implements Meter<ReconstructedPeakResult> {
  private readonly channels: number;
  private readonly sampleRate: number;
  private readonly ceilingLinear: number;
  private readonly ceilingDbtp: number;
  private readonly mergeFrames: number;
  /** Per channel: the largest reading so far, its frame, and the gate below which nothing matters. */
  private readonly maxima: Float64Array;
  private readonly maxFrame: Float64Array;
  private readonly gates: Float64Array;
  /** Largest |sample| seen (frames ahead of the readings): raises the pruning threshold early. */
  private readonly samplePeaks: Float64Array;
  private readonly history: Float64Array[];
  private readonly historyMax: Float64Array;
  /** HISTORY input frames, then the block; and the stage-1 points at the same indices. */
  private ext = new Float64Array(0);
  private mid = new Float64Array(0);
  /** Slow-path values of one frame: grid values -1..8 (the previous frame's last, the next sample). */
  private readonly scratch = new Float64Array(10);
  private readonly envelopes = new EnvelopeBuilder();
  private readonly overLog: OverLog;
  private readonly s: Float64Array;
  private readonly d: Float64Array;
  private readonly h: Float64Array;
  private position = 0;
  private pruned = 0;
  private final: ReconstructedPeakResult | null = null;

  constructor(info: StreamInfo, options: ReconstructedPeakOptions = {}) {
    this.channels = info.channels;
    this.sampleRate = info.sampleRate;
    this.ceilingDbtp = options.overCeilingDbtp ?? -1;
    this.ceilingLinear = Math.pow(10, this.ceilingDbtp / 20);
    this.mergeFrames = Math.round((options.overMergeSeconds ?? 0.05) * info.sampleRate);
    this.maxima = new Float64Array(info.channels);
    this.maxFrame = new Float64Array(info.channels);
    this.gates = new Float64Array(info.channels);
    this.samplePeaks = new Float64Array(info.channels);
    this.history = Array.from({ length: info.channels }, () => new Float64Array(HISTORY));
    this.historyMax = new Float64Array(info.channels);
    this.overLog = new OverLog('reconstructed_over', info.channels, info.sampleRate, this.mergeFrames, options.maxEvents);
    // Pair k joins z[j + 1 + k] and z[j - k]: halved sums and differences of the mirrored taps.
    const g1 = quarterPhaseTaps(1), g2 = quarterPhaseTaps(2);
    const w = STAGE2_HALF_WIDTH - 1;
    this.s = Float64Array.from({ length: 4 }, (_, k) => 0.5 * (g1[w + 1 + k] + g1[w - k]));
    this.d = Float64Array.from({ length: 4 }, (_, k) => 0.5 * (g1[w + 1 + k] - g1[w - k]));
    this.h = Float64Array.from({ length: 4 }, (_, k) => g2[w + 1 + k]);
  }

  push(block: PcmBlock): void {
    if (this.final) throw new Error('ReconstructedPeakMeter: push after result()');
    this.consume(block);
  }

  private consume(block: PcmBlock): void {
    const frames = block.frames;
    if (frames === 0) return;
    const envelope = this.envelopes.of(block);
    if (this.ext.length < HISTORY + frames) {
      this.ext = new Float64Array(HISTORY + frames);
      this.mid = new Float64Array(HISTORY + frames);
    }
    for (let c = 0; c < this.channels; c++) {
      const history = this.history[c];
      this.ext.set(history, 0);
      this.ext.set(block.channelData[c].subarray(0, frames), HISTORY);
      this.scanChunks(c, envelope.maxAbs[c], frames);
      history.set(this.ext.subarray(frames, frames + HISTORY));
      this.historyMax[c] = absMax(history, 0, HISTORY);
    }
    this.position += frames;
  }

  /**
   * Chunk k holds block frames [32k, 32k + 32); frame r completes the grid frame at ext index
   * r + HISTORY - LATENCY_FRAMES, whose taps are block frames r - 35 .. r.
   */
  private scanChunks(channel: number, chunkMax: Float32Array, frames: number): void {
    let before1 = this.historyMax[channel], before2 = before1;
    let uEnd = 0;
    const first = Math.max(0, LATENCY_FRAMES - this.position); // grid frames before t = 0 are not read
    for (let k = 0, from = 0; from < frames; k++, from += ENVELOPE_CHUNK_FRAMES) {
      const to = Math.min(from + ENVELOPE_CHUNK_FRAMES, frames);
      const sampleMax = chunkMax[k];
      if (sampleMax > this.samplePeaks[channel]) this.samplePeaks[channel] = sampleMax;
      const start = Math.max(from, first);
      if (start < to) {
        const tapMax = Math.max(sampleMax, before1, before2);
        if (!this.mayExceed(tapMax * PRUNE_GAIN, channel)) this.pruned += to - start;
        else {
          const e0 = start + HISTORY - LATENCY_FRAMES, e1 = to + HISTORY - LATENCY_FRAMES;
          // Stage-1 points e0 - 2 .. e1 + 1: the grid frames' and the previous frame's last value.
          this.halfSamples(Math.max(uEnd, e0 - 2), e1 + 2);
          uEnd = e1 + 2;
          // Stage 2 reads x[e - 1 .. e + 2] (in this chunk and the one before) and u[e - 2 .. e + 2].
          const zMax = Math.max(sampleMax, before1, absMax(this.mid, e0 - 2, e1 + 2));
          if (!this.mayExceed(zMax * STAGE2_PRUNE_GAIN, channel)) this.pruned += to - start;
          else this.interpolateSpan(channel, e0, e1);
        }
      }
      before2 = before1;
      before1 = sampleMax;
    }
  }

  /**
   * Whether a reading up to `bound` could matter. A bound below a sample still to be read (or read)
   * cannot be the maximum nor its first frame; a bound at most the maximum read so far cannot either.
   */
  private mayExceed(bound: number, channel: number): boolean {
    return bound > this.ceilingLinear || (bound > this.maxima[channel] && bound >= this.samplePeaks[channel]);
  }

  /**
   * Stage 1 into mid[from .. to): the point half-way between ext[m] and ext[m + 1]. Four outputs
   * per pass share each load (a third faster than one output from pre-added pairs); every output
   * adds its 32 products in tap order on either path, so its value does not depend on the range.
   */
  private halfSamples(from: number, to: number): void {
    const x = this.ext, u = this.mid, c = STAGE1;
    const c0 = c[0], c1 = c[1], c2 = c[2], c3 = c[3], c4 = c[4], c5 = c[5], c6 = c[6], c7 = c[7];
    const c8 = c[8], c9 = c[9], c10 = c[10], c11 = c[11], c12 = c[12], c13 = c[13], c14 = c[14], c15 = c[15];
    let m = from;
    for (; m + 3 < to; m += 4) {
      let a0 = 0, a1 = 0, a2 = 0, a3 = 0, v = 0;
      v = x[m - 15]; a0 += c15 * v;
      v = x[m - 14]; a0 += c14 * v; a1 += c15 * v;
      v = x[m - 13]; a0 += c13 * v; a1 += c14 * v; a2 += c15 * v;
      v = x[m - 12]; a0 += c12 * v; a1 += c13 * v; a2 += c14 * v; a3 += c15 * v;
      v = x[m - 11]; a0 += c11 * v; a1 += c12 * v; a2 += c13 * v; a3 += c14 * v;
      v = x[m - 10]; a0 += c10 * v; a1 += c11 * v; a2 += c12 * v; a3 += c13 * v;
      v = x[m - 9]; a0 += c9 * v; a1 += c10 * v; a2 += c11 * v; a3 += c12 * v;
      v = x[m - 8]; a0 += c8 * v; a1 += c9 * v; a2 += c10 * v; a3 += c11 * v;
      v = x[m - 7]; a0 += c7 * v; a1 += c8 * v; a2 += c9 * v; a3 += c10 * v;
      v = x[m - 6]; a0 += c6 * v; a1 += c7 * v; a2 += c8 * v; a3 += c9 * v;
      v = x[m - 5]; a0 += c5 * v; a1 += c6 * v; a2 += c7 * v; a3 += c8 * v;
      v = x[m - 4]; a0 += c4 * v; a1 += c5 * v; a2 += c6 * v; a3 += c7 * v;
      v = x[m - 3]; a0 += c3 * v; a1 += c4 * v; a2 += c5 * v; a3 += c6 * v;
      v = x[m - 2]; a0 += c2 * v; a1 += c3 * v; a2 += c4 * v; a3 += c5 * v;
      v = x[m - 1]; a0 += c1 * v; a1 += c2 * v; a2 += c3 * v; a3 += c4 * v;
      v = x[m]; a0 += c0 * v; a1 += c1 * v; a2 += c2 * v; a3 += c3 * v;
      v = x[m + 1]; a0 += c0 * v; a1 += c0 * v; a2 += c1 * v; a3 += c2 * v;
      v = x[m + 2]; a0 += c1 * v; a1 += c0 * v; a2 += c0 * v; a3 += c1 * v;
      v = x[m + 3]; a0 += c2 * v; a1 += c1 * v; a2 += c0 * v; a3 += c0 * v;
      v = x[m + 4]; a0 += c3 * v; a1 += c2 * v; a2 += c1 * v; a3 += c0 * v;
      v = x[m + 5]; a0 += c4 * v; a1 += c3 * v; a2 += c2 * v; a3 += c1 * v;
      v = x[m + 6]; a0 += c5 * v; a1 += c4 * v; a2 += c3 * v; a3 += c2 * v;
      v = x[m + 7]; a0 += c6 * v; a1 += c5 * v; a2 += c4 * v; a3 += c3 * v;
      v = x[m + 8]; a0 += c7 * v; a1 += c6 * v; a2 += c5 * v; a3 += c4 * v;
      v = x[m + 9]; a0 += c8 * v; a1 += c7 * v; a2 += c6 * v; a3 += c5 * v;
      v = x[m + 10]; a0 += c9 * v; a1 += c8 * v; a2 += c7 * v; a3 += c6 * v;
      v = x[m + 11]; a0 += c10 * v; a1 += c9 * v; a2 += c8 * v; a3 += c7 * v;
      v = x[m + 12]; a0 += c11 * v; a1 += c10 * v; a2 += c9 * v; a3 += c8 * v;
      v = x[m + 13]; a0 += c12 * v; a1 += c11 * v; a2 += c10 * v; a3 += c9 * v;
      v = x[m + 14]; a0 += c13 * v; a1 += c12 * v; a2 += c11 * v; a3 += c10 * v;
      v = x[m + 15]; a0 += c14 * v; a1 += c13 * v; a2 += c12 * v; a3 += c11 * v;
      v = x[m + 16]; a0 += c15 * v; a1 += c14 * v; a2 += c13 * v; a3 += c12 * v;
      v = x[m + 17]; a1 += c15 * v; a2 += c14 * v; a3 += c13 * v;
      v = x[m + 18]; a2 += c15 * v; a3 += c14 * v;
      v = x[m + 19]; a3 += c15 * v;
      u[m] = a0; u[m + 1] = a1; u[m + 2] = a2; u[m + 3] = a3;
    }
    for (; m < to; m++) {
      let a = 0;
      for (let t = 0; t < 32; t++) a += STAGE1_FULL[t] * x[m - 15 + t];
      u[m] = a;
    }
  }

  /** The grid value at 7/8 of frame e (S - D of its second half), as the span loop computes it. */
  private lastGridValue(e: number): number {
    const x = this.ext, u = this.mid, s = this.s, d = this.d;
    const x0 = x[e - 1], x1 = x[e], x2 = x[e + 1], x3 = x[e + 2];
    const ub = u[e - 1], uc = u[e], ud = u[e + 1], ue = u[e + 2];
    const sb = s[0] * (x2 + uc) + s[1] * (ud + x1) + s[2] * (x3 + ub) + s[3] * (ue + x0);
    const db = d[0] * (x2 - uc) + d[1] * (ud - x1) + d[2] * (x3 - ub) + d[3] * (ue - x0);
    return sb - db;
  }

  /**
   * Grid frames at ext indices [e0, e1). Frame e's two halves interpolate z from x[e] to u[e] and
   * from u[e] to x[e + 1]; pair k of each half joins z[j + 1 + k] and z[j - k].
   */
  private interpolateSpan(channel: number, e0: number, e1: number): void {
    const x = this.ext, u = this.mid;
    const s0 = this.s[0], s1 = this.s[1], s2 = this.s[2], s3 = this.s[3];
    const d0 = this.d[0], d1 = this.d[1], d2 = this.d[2], d3 = this.d[3];
    const h0 = this.h[0], h1 = this.h[1], h2 = this.h[2], h3 = this.h[3];
    const scratch = this.scratch;
    let gate = this.gates[channel] * INVERSE_CAP;
    let previous = this.lastGridValue(e0 - 1);
    for (let e = e0; e < e1; e++) {
      const x0 = x[e - 1], x1 = x[e], x2 = x[e + 1], x3 = x[e + 2];
      const ua = u[e - 2], ub = u[e - 1], uc = u[e], ud = u[e + 1], ue = u[e + 2];
      const sa = s0 * (uc + x1) + s1 * (x2 + ub) + s2 * (ud + x0) + s3 * (x3 + ua);
      const da = d0 * (uc - x1) + d1 * (x2 - ub) + d2 * (ud - x0) + d3 * (x3 - ua);
      const ya = h0 * (uc + x1) + h1 * (x2 + ub) + h2 * (ud + x0) + h3 * (x3 + ua);
      const sb = s0 * (x2 + uc) + s1 * (ud + x1) + s2 * (x3 + ub) + s3 * (ue + x0);
      const db = d0 * (x2 - uc) + d1 * (ud - x1) + d2 * (x3 - ub) + d3 * (ue - x0);
      const yb = h0 * (x2 + uc) + h1 * (ud + x1) + h2 * (x3 + ub) + h3 * (ue + x0);
      // Rare conditions tested one by one predict well (see true-peak.ts).
      if (Math.abs(sa) + Math.abs(da) > gate || Math.abs(sb) + Math.abs(db) > gate || Math.abs(ya) > gate
        || Math.abs(yb) > gate || Math.abs(uc) > gate || Math.abs(x1) > gate) {
        scratch[0] = previous; scratch[1] = x1; scratch[2] = sa + da; scratch[3] = ya; scratch[4] = sa - da;
        scratch[5] = uc; scratch[6] = sb + db; scratch[7] = yb; scratch[8] = sb - db; scratch[9] = x2;
        this.settle(channel, this.position + e - HISTORY);
        gate = this.gates[channel] * INVERSE_CAP;
      }
      previous = sb - db;
    }
  }

  /** The frame's reading from its grid values in `scratch`: each local maximum refined by a parabola. */
  private settle(channel: number, frame: number): void {
    const g = this.scratch;
    let peak = 0;
    for (let q = 1; q <= RECONSTRUCTION_OVERSAMPLING; q++) {
      const a = Math.abs(g[q - 1]), b = Math.abs(g[q]), c = Math.abs(g[q + 1]);
      let value = b;
      if (b >= a && b >= c) {
        const curvature = 2 * b - a - c;
        if (curvature > 0) value = Math.min(b + ((a - c) * (a - c)) / (8 * curvature), b * REFINEMENT_CAP);
      }
      if (value > peak) peak = value;
    }
    if (peak > this.maxima[channel]) {
      this.maxima[channel] = peak;
      this.maxFrame[channel] = frame;
      this.gates[channel] = Math.min(peak, this.ceilingLinear);
    }
    if (peak > this.ceilingLinear) this.overLog.record(channel, frame, peak);
  }

  /** Reads the last LATENCY_FRAMES grid frames (zeros follow the stream), then the result; once. */
  result(): ReconstructedPeakResult {
    if (this.final) return this.final;
    const tail = Array.from({ length: this.channels }, () => new Float32Array(LATENCY_FRAMES));
    if (this.position > 0) this.consume({ channelData: tail, frames: LATENCY_FRAMES });
    const overs = this.overLog.finish();
    const toDb = (v: number) => (v > 0 ? 20 * Math.log10(v) : null);
    let best = -1;
    for (let c = 0; c < this.channels; c++) if (best < 0 || this.maxima[c] > this.maxima[best]) best = c;
    const programme = best >= 0 ? this.maxima[best] : 0;
    this.final = {
      channelPeakDbtp: Array.from(this.maxima, toDb),
      peakDbtp: toDb(programme),
      peakAtSeconds: programme > 0 ? this.maxFrame[best] / this.sampleRate : null,
      overCeilingDbtp: this.ceilingDbtp,
      ...overs,
      prunedFrames: this.pruned,
    };
    return this.final;
  }
}
