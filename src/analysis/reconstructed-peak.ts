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
// Speed (all exact): a WebAssembly SIMD kernel (kernels/reconstructed-peak.wat) runs the chunk
// loop, both stages and the refinement. A 32-frame chunk is skipped when max|x over its taps|
// times the cascade's largest per-phase sum |h| (times the cap) cannot beat both the running
// maximum and the over ceiling, max|x| coming from the block envelope; the first test over a
// whole 16384-frame piece skips the kernel call and the copy into its memory; after the screen's
// stage 1, the same test on max|z| (within its margin) with stage 2's gain. A chunk not skipped goes
// through a float32 screen (both stages, four frames a vector, within a margin of 2^-15
// max|x| that the kernel's comment proves): a frame that cannot beat the maximum or the ceiling
// does nothing; one that is certainly an over and can raise neither the maximum nor the open
// over's largest value is counted as an over; only the rest get the float64 path, whose f64x2
// lanes hold two neighbouring outputs with the scalar loop's arithmetic in its order, so every
// reading and over equals the JavaScript meter's to the bit (kept as
// test/helpers/reference-meters/reconstructed-peak-baseline.ts and compared in the tests). Overs
// leave the kernel as runs OverLog.recordRun takes whole. On the hard-limited master (programme
// +12 dB clipped at -1 dBFS, clipped runs one float32 step below the ceiling) a quarter of the
// frames pass the float64 gate; the screen sends 1.6 % to the float64 path and counts 11 % as
// overs. Where it would send more than one run per chunk on average (a steady tone near its
// maximum) the kernel takes chunks whole on the float64 path instead, probing with the screen.
// Measured, 48 kHz stereo, ms per audio minute, pushed alone (own envelope), least of 15
// alternating rounds in one process on a shared machine (load average 5-8), before -> after:
// hard-limited master 103.8 -> 81.1 (process CPU 96.2 -> 80.9; medians 124.0 -> 98.7; 93.5 ->
// 70.1 before the tone fallback, at lower load); 997 Hz tone at 0.89 FS 93.2 -> 87.7; programme at
// -20 dBFS 19.0 -> 15.5 (CPU 17.7 -> 14.9). With the envelope attached as inside the runner, 2
// minutes of the benchmark's programme: CPU 11.2 -> 8.7 (11.4 -> 9.3 in another run), so the
// runner's 5.4 on the 60-minute benchmark file scales to about 4.4.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from './envelope.ts';
import type { EventList } from './events.ts';
import { OverLog } from './overs.ts';
import { amplitudeToDb, dbToAmplitude } from './units.ts';
import {
  CHANNEL_SLOTS,
  ReconstructionKernel,
  RECONSTRUCTION_HISTORY_FRAMES,
  RECONSTRUCTION_KERNEL_FRAMES,
  SLOT,
} from './kernels/reconstructed-peak.ts';

/**
 * Stage 1: c[k] weighs x[n - k] + x[n + 1 + k] for the point half-way between x[n] and x[n + 1].
 * scipy.signal.remez(32, [0, 0.45], [1], fs=1), second half: |1 - H(f)| <= 0.00253 to 0.45 fs.
 */
export const HALF_SAMPLE_TAPS: readonly number[] = [
  0.6353145420735684, -0.20831774972170608, 0.12092928441540912, -0.08217169829470033, 0.05975106117058665,
  -0.04488661207306316, 0.0342172949413829, -0.02618244764463183, 0.019959183494764873, -0.015062874735004048,
  0.011193798388692028, -0.008139940008045179, 0.005754555486991785, -0.003918347131691532, 0.0025325490286641013,
  -0.0022263561251580992,
];
/** The same taps in input order, x[m - 15] .. x[m + 16]. */
const STAGE1_FULL = Float64Array.from([...HALF_SAMPLE_TAPS].reverse().concat(HALF_SAMPLE_TAPS));
export const STAGE2_HALF_WIDTH = 4;
const STAGE2_BETA = 6.5;
/** Grid points per input sample. */
export const RECONSTRUCTION_OVERSAMPLING = 8;
/** The refinement cap: a signal band-limited to fs/2 rises at most this much between 8x grid points. */
export const REFINEMENT_CAP = 1 / Math.cos(Math.PI / 16);

function besselI0(x: number): number {
  let sum = 1,
    term = 1;
  for (let k = 1; k < 50; k++) {
    term *= (x / (2 * k)) ** 2;
    sum += term;
  }
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
    return (sinc * besselI0(STAGE2_BETA * Math.sqrt(Math.max(0, 1 - r * r)))) / besselI0(STAGE2_BETA);
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
    if (j % 2 === 0) {
      out[n + offset] += w;
      return;
    }
    HALF_SAMPLE_TAPS.forEach((c, k) => {
      out[n - k + offset] += w * c;
      out[n + 1 + k + offset] += w * c;
    });
  };
  for (let q = 0; q < RECONSTRUCTION_OVERSAMPLING; q++) {
    const j = q >> 2,
      r = q & 3;
    if (r === 0) addZ(kernels[q], j, 1);
    else quarterPhaseTaps(r).forEach((g, i) => addZ(kernels[q], j + i - STAGE2_HALF_WIDTH + 1, g));
  }
  return kernels;
}

/** Largest possible |grid value| per unit of max|x| over its taps. */
export const RECONSTRUCTION_GAIN_BOUND = Math.max(
  ...gridPhaseKernels().map((h) => h.reduce((s, v) => s + Math.abs(v), 0)),
);
/** Bound on a frame's reading per unit max|x|; the margin covers rounding in the sums. */
const PRUNE_GAIN = RECONSTRUCTION_GAIN_BOUND * REFINEMENT_CAP * (1 + 1e-9);
/** The same bound from max |z| over stage 2's taps, once stage 1 is known. */
const STAGE2_PRUNE_GAIN =
  Math.max(...[1, 2, 3].map((q) => quarterPhaseTaps(q).reduce((s, v) => s + Math.abs(v), 0))) *
  REFINEMENT_CAP *
  (1 + 1e-9);
/** cap * value <= gate for every value <= gate * this (the margin covers rounding). */
const INVERSE_CAP = (1 - 1e-12) / REFINEMENT_CAP;

/** Input frames after a grid frame that its values need (stage 1: 16, stage 2: 2). */
const LATENCY_FRAMES = 18;
/** Input frames kept before each block: back to the taps of the previous frame's last grid value. */
const HISTORY = 2 * LATENCY_FRAMES;
// A chunk's taps lie in it, the chunk before and the one before that.
if (ENVELOPE_CHUNK_FRAMES * 2 < HISTORY) throw new Error('envelope chunks are shorter than the filter history');
// The kernel is written for these (and for 32-frame chunks).
/** Frames per kernel call, and per test whether a call is needed at all (4096 and 2048 measured slower). */
const PIECE_FRAMES = RECONSTRUCTION_KERNEL_FRAMES;
if (HISTORY !== RECONSTRUCTION_HISTORY_FRAMES || ENVELOPE_CHUNK_FRAMES !== 32)
  throw new Error('the reconstruction kernel assumes a 36-frame history and 32-frame chunks');

export interface ReconstructedPeakOptions {
  /** Reconstructed values above this ceiling become 'reconstructed_over' events. */
  overCeilingDbtp?: number;
  /** Overs closer than this merge into one event. */
  overMergeSeconds?: number;
  maxEvents?: number;
}

/** Over events ('reconstructed_over', merged; by start, then channel) in `events`. */
export interface ReconstructedPeakResult extends EventList {
  /** Per channel, dBTP; null for digital silence. */
  channelPeakDbtp: (number | null)[];
  peakDbtp: number | null;
  /** Time (s) of the programme's peak, to the input sample. */
  peakAtSeconds: number | null;
  overCeilingDbtp: number;
  /** Frames whose interpolation was skipped by the exact bound (for benchmarks). */
  prunedFrames: number;
}

export class ReconstructedPeakMeter implements Meter<ReconstructedPeakResult> {
  private readonly channels: number;
  private readonly sampleRate: number;
  private readonly ceilingDbtp: number;
  /** Per channel, the kernel's slots between blocks: the largest reading, its frame, the gate, the
   * largest |sample| seen (frames ahead of the readings: raises the pruning threshold early) and
   * max |x| of the history. */
  private readonly slots: Float64Array;
  /** Per channel, the HISTORY input frames before the next block. */
  private readonly histories: Float64Array;
  private readonly kernel: ReconstructionKernel;
  private readonly envelopes = new EnvelopeBuilder();
  private readonly overLog: OverLog;
  /** Overs at most this many frames after the open over's last one join it (OverLog's rule). */
  private readonly mergeLimitFrames: number;
  private position = 0;
  private final: ReconstructedPeakResult | null = null;

  constructor(info: StreamInfo, options: ReconstructedPeakOptions = {}) {
    this.channels = info.channels;
    this.sampleRate = info.sampleRate;
    this.ceilingDbtp = options.overCeilingDbtp ?? -1;
    const mergeFrames = Math.round((options.overMergeSeconds ?? 0.05) * info.sampleRate);
    this.slots = new Float64Array(info.channels * CHANNEL_SLOTS);
    this.histories = new Float64Array(info.channels * HISTORY);
    this.overLog = new OverLog('reconstructed_over', info.channels, info.sampleRate, mergeFrames, options.maxEvents);
    this.mergeLimitFrames = mergeFrames + 1;
    // Pair k joins z[j + 1 + k] and z[j - k]: halved sums and differences of the mirrored taps.
    const g1 = quarterPhaseTaps(1),
      g2 = quarterPhaseTaps(2);
    const w = STAGE2_HALF_WIDTH - 1;
    this.kernel = new ReconstructionKernel({
      stage1: STAGE1_FULL,
      halfTaps: Float64Array.from(HALF_SAMPLE_TAPS),
      s: Float64Array.from({ length: 4 }, (_, k) => 0.5 * (g1[w + 1 + k] + g1[w - k])),
      d: Float64Array.from({ length: 4 }, (_, k) => 0.5 * (g1[w + 1 + k] - g1[w - k])),
      h: Float64Array.from({ length: 4 }, (_, k) => g2[w + 1 + k]),
      ceiling: dbToAmplitude(this.ceilingDbtp),
      pruneGain: PRUNE_GAIN,
      stage2PruneGain: STAGE2_PRUNE_GAIN,
      inverseCap: INVERSE_CAP,
      cap: REFINEMENT_CAP,
    });
  }

  push(block: PcmBlock): void {
    if (this.final) throw new Error('ReconstructedPeakMeter: push after result()');
    this.consume(block);
  }

  private consume(block: PcmBlock): void {
    const frames = block.frames;
    if (frames === 0) return;
    const envelope = this.envelopes.of(block);
    const kernel = this.kernel,
      state = kernel.state;
    for (let c = 0; c < this.channels; c++) {
      const x = block.channelData[c],
        chunkMax = envelope.maxAbs[c];
      const slots = this.slots.subarray(c * CHANNEL_SLOTS, (c + 1) * CHANNEL_SLOTS);
      const history = this.histories.subarray(c * HISTORY, (c + 1) * HISTORY);
      state.set(slots);
      kernel.history.set(history);
      // Pieces are whole chunks; the kernel carries the history from one to the next.
      for (let from = 0; from < frames; from += PIECE_FRAMES) {
        const n = Math.min(PIECE_FRAMES, frames - from);
        const chunk0 = from / ENVELOPE_CHUNK_FRAMES,
          chunkEnd = chunk0 + Math.ceil(n / ENVELOPE_CHUNK_FRAMES);
        let pieceMax = 0;
        for (let k = chunk0; k < chunkEnd; k++) if (chunkMax[k] > pieceMax) pieceMax = chunkMax[k];
        const at = this.position + from;
        // Every chunk's taps lie in the piece and the history: if their joint bound cannot matter,
        // no chunk's can, and only the state moves on (without copying the piece into the kernel).
        if (at >= LATENCY_FRAMES && !this.mayExceed(Math.max(pieceMax, state[SLOT.historyMax]) * PRUNE_GAIN)) {
          this.skip(x, from, n, pieceMax);
          continue;
        }
        kernel.input.set(x.subarray(from, from + n));
        kernel.chunkMax.set(chunkMax.subarray(chunk0, chunkEnd));
        state[SLOT.position] = at;
        const open = this.overLog.openOver(c);
        kernel.openOver[0] = open ? open.lastFrame : -1e300;
        kernel.openOver[1] = open ? open.peak : 0;
        kernel.openOver[2] = this.mergeLimitFrames;
        const runs = kernel.scan(n);
        for (let i = 0; i < runs; i++) {
          const first = at + kernel.runFirst[i] - HISTORY;
          this.overLog.recordRun(c, first, at + kernel.runLast[i] - HISTORY, kernel.runCount[i], kernel.runPeak[i]);
        }
      }
      slots.set(state.subarray(0, CHANNEL_SLOTS));
      history.set(kernel.history);
    }
    this.position += frames;
  }

  /** Whether a reading up to `bound` could matter, as the kernel decides it for each chunk. */
  private mayExceed(bound: number): boolean {
    const state = this.kernel.state;
    return bound > state[SLOT.ceiling] || (bound > state[SLOT.maximum] && bound >= state[SLOT.samplePeak]);
  }

  /** What the kernel leaves behind for a piece whose every chunk it would prune. */
  private skip(x: Float32Array, from: number, n: number, pieceMax: number): void {
    const state = this.kernel.state,
      history = this.kernel.history;
    if (pieceMax > state[SLOT.samplePeak]) state[SLOT.samplePeak] = pieceMax;
    state[SLOT.pruned] += n;
    if (n >= HISTORY) history.set(x.subarray(from + n - HISTORY, from + n));
    else {
      history.copyWithin(0, n);
      history.set(x.subarray(from, from + n), HISTORY - n);
    }
    let m = 0;
    for (let i = 0; i < HISTORY; i++) {
      const a = Math.abs(history[i]);
      if (a > m) m = a;
    }
    state[SLOT.historyMax] = m;
  }

  /** Reads the last LATENCY_FRAMES grid frames (zeros follow the stream), then the result; once. */
  result(): ReconstructedPeakResult {
    if (this.final) return this.final;
    const tail = Array.from({ length: this.channels }, () => new Float32Array(LATENCY_FRAMES));
    if (this.position > 0) this.consume({ channelData: tail, frames: LATENCY_FRAMES });
    const overs = this.overLog.finish();
    const maxima = Array.from({ length: this.channels }, (_, c) => this.slots[c * CHANNEL_SLOTS + SLOT.maximum]);
    let best = -1;
    for (let c = 0; c < this.channels; c++) if (best < 0 || maxima[c] > maxima[best]) best = c;
    const programme = best >= 0 ? maxima[best] : 0;
    this.final = {
      channelPeakDbtp: maxima.map(amplitudeToDb),
      peakDbtp: amplitudeToDb(programme),
      peakAtSeconds: programme > 0 ? this.slots[best * CHANNEL_SLOTS + SLOT.maximumFrame] / this.sampleRate : null,
      overCeilingDbtp: this.ceilingDbtp,
      ...overs,
      prunedFrames: this.kernel.state[SLOT.pruned],
    };
    return this.final;
  }
}
