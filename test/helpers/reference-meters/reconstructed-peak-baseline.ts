// The reconstructed peak meter as it was before its WebAssembly kernel (reconstructed-peak.ts),
// kept verbatim as the baseline the optimised meter must equal to the bit (readings, overs).
// Reconstructed peak: the peak of the band-limited waveform the samples describe, within 0.05 dB
// for content below 0.45 fs at any sample rate (the design is in units of fs). The Annex 2
// example filter (true-peak.ts, kept as the conformance reading) reads up to ~0.3 dB low there.
//
// Design: an 8x grid from two interpolation stages, then a parabola at each grid maximum.
// - Stage 1 (to 2x): the half-sample point u[n], a 32-tap equiripple filter (Parks-McClellan,
//   unit gain over 0-0.45 fs). The samples themselves pass unchanged.
// - Stage 2 (to 8x): quarter points of the 2x stream z, a Kaiser-windowed sinc (8 taps per phase,
//   beta 6.5). Phases 1/4 and 3/4 mirror each other: from pre-added and pre-subtracted tap pairs
//   they are S + D and S - D, and max(|S + D|, |S - D|) = |S| + |D| exactly.
// - Refinement: a grid value at least as large as both neighbours becomes the vertex of the
//   parabola through the three, capped at sec(pi/16) times the value (the most a signal
//   band-limited to fs/2 rises between 8x grid points), so the cap bounds what it can add.
// Error budget (measured; the tests check each):
// - interpolation, max |F(f) - 1| over 0-0.45 fs at any grid phase: 0.00258 (0.022 dB), of which
//   stage 1's passband ripple is 0.00253;
// - grid loss left by the parabola, a tone at 0.45 fs: 0.0031 dB (without it 0.136 dB);
// - in all 0.025 dB. Sines at 32-192 kHz read -0.021..+0.022 dB from their amplitude.
// Content above 0.45 fs reads low (stage 1 has gain 0.5 at fs/2): hard-clipped full-band noise
// read 0.23-0.33 dB below a 64x sinc reference (the Annex 2 filter 0.48-0.75 dB).
// The reading covers t in [0, N) for N frames, zeros outside: ringing after the last frame is
// not read. Grid points at the samples are the samples, so it never reads below the sample peak.
//
// Speed (all exact): a 32-frame chunk is skipped when max|x over its taps| times the cascade's
// largest per-phase sum |h| (times the cap) cannot beat both the running maximum and the over
// ceiling, max|x| coming from the block envelope; after stage 1 the same test on max|z| with
// stage 2's gain; inside a chunk a frame takes the slow path (parabolas) only when cap *
// max|grid value| beats the gate. Samples are copied to Float64 once (one conversion per sample,
// not per tap) and stage 1 makes four outputs per pass. On a hard-limited 48 kHz stereo master
// this measured about twice the Annex 2 meter's time.

import type { Meter, PcmBlock, StreamInfo } from '../../../src/analysis/audio.ts';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from '../../../src/analysis/envelope.ts';
import type { AnalysisEvent } from '../../../src/analysis/events.ts';
import { OverLog } from '../../../src/analysis/overs.ts';

/**
 * Stage 1: c[k] weighs x[n - k] + x[n + 1 + k] for the point half-way between x[n] and x[n + 1].
 * scipy.signal.remez(32, [0, 0.45], [1], fs=1), second half: |1 - H(f)| <= 0.00253 to 0.45 fs.
 */
export const HALF_SAMPLE_TAPS: readonly number[] = [
  0.6353145420735684, -0.20831774972170608, 0.12092928441540912, -0.08217169829470033,
  0.05975106117058665, -0.04488661207306316, 0.0342172949413829, -0.02618244764463183,
  0.019959183494764873, -0.015062874735004048, 0.011193798388692028, -0.008139940008045179,
  0.005754555486991785, -0.003918347131691532, 0.0025325490286641013, -0.0022263561251580992,
];
const STAGE1 = Float64Array.from(HALF_SAMPLE_TAPS);
/** The same taps in input order, x[m - 15] .. x[m + 16]. */
const STAGE1_FULL = Float64Array.from([...HALF_SAMPLE_TAPS].reverse().concat(HALF_SAMPLE_TAPS));
const STAGE2_HALF_WIDTH = 4;
const STAGE2_BETA = 6.5;
/** Grid points per input sample. */
export const RECONSTRUCTION_OVERSAMPLING = 8;
/** The refinement cap: a signal band-limited to fs/2 rises at most this much between 8x grid points. */
export const REFINEMENT_CAP = 1 / Math.cos(Math.PI / 16);

function besselI0(x: number): number {
  let sum = 1, term = 1;
  for (let k = 1; k < 50; k++) { term *= (x / (2 * k)) ** 2; sum += term; }
  return sum;
}

/**
 * Stage 2, phase q (1..3) of 4: weights on the 2x stream's z[j + m], m = -3..4, for the point
 * q/4 of the way from z[j] to z[j + 1]. Kaiser-windowed sinc, normalised to unit DC gain.
 */
export function quarterPhaseTaps(q: number): Float64Array {
  const taps = Float64Array.from({ length: 2 * STAGE2_HALF_WIDTH }, (_, i) => {
    const t = q / 4 - (i - STAGE2_HALF_WIDTH + 1);
    const r = t / STAGE2_HALF_WIDTH;
    const sinc = t === 0 ? 1 : Math.sin(Math.PI * t) / (Math.PI * t);
    return sinc * besselI0(STAGE2_BETA * Math.sqrt(Math.max(0, 1 - r * r))) / besselI0(STAGE2_BETA);
  });
  const sum = taps.reduce((s, v) => s + v, 0);
  return taps.map((v) => v / sum);
}

/** Per grid phase q (0..7), the weights of x[n + k], k = -17..18, that give the value at n + q/8. */
export function gridPhaseKernels(): Float64Array[] {
  const offset = 17;
  const kernels = Array.from({ length: RECONSTRUCTION_OVERSAMPLING }, () => new Float64Array(36));
  // z[j] of the 2x stream as weights on x: even j is x[j/2], odd j is the stage-1 point.
  const addZ = (out: Float64Array, j: number, w: number) => {
    const n = Math.floor(j / 2);
    if (j % 2 === 0) { out[n + offset] += w; return; }
    HALF_SAMPLE_TAPS.forEach((c, k) => { out[n - k + offset] += w * c; out[n + 1 + k + offset] += w * c; });
  };
  for (let q = 0; q < RECONSTRUCTION_OVERSAMPLING; q++) {
    const j = q >> 2, r = q & 3;
    if (r === 0) addZ(kernels[q], j, 1);
    else quarterPhaseTaps(r).forEach((g, i) => addZ(kernels[q], j + i - STAGE2_HALF_WIDTH + 1, g));
  }
  return kernels;
}

/** Largest possible |grid value| per unit of max|x| over its taps. */
export const RECONSTRUCTION_GAIN_BOUND = Math.max(...gridPhaseKernels().map((h) => h.reduce((s, v) => s + Math.abs(v), 0)));
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

export interface ReconstructedPeakOptions {
  /** Reconstructed values above this ceiling become 'reconstructed_over' events. */
  overCeilingDbtp?: number;
  /** Overs closer than this merge into one event. */
  overMergeSeconds?: number;
  maxEvents?: number;
}

export interface ReconstructedPeakResult {
  /** Per channel, dBTP; null for digital silence. */
  channelPeakDbtp: (number | null)[];
  peakDbtp: number | null;
  /** Time (s) of the programme's peak, to the input sample. */
  peakAtSeconds: number | null;
  overCeilingDbtp: number;
  overs: AnalysisEvent[];
  /** Merged over events, including those past maxEvents. */
  oversTotal: number;
  /** Frames whose interpolation was skipped by the exact bound (for benchmarks). */
  prunedFrames: number;
}

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
    const { overs, oversTotal } = this.overLog.finish();
    const toDb = (v: number) => (v > 0 ? 20 * Math.log10(v) : null);
    let best = -1;
    for (let c = 0; c < this.channels; c++) if (best < 0 || this.maxima[c] > this.maxima[best]) best = c;
    const programme = best >= 0 ? this.maxima[best] : 0;
    this.final = {
      channelPeakDbtp: Array.from(this.maxima, toDb),
      peakDbtp: toDb(programme),
      peakAtSeconds: programme > 0 ? this.maxFrame[best] / this.sampleRate : null,
      overCeilingDbtp: this.ceilingDbtp,
      overs,
      oversTotal,
      prunedFrames: this.pruned,
    };
    return this.final;
  }
}
