// The reconstructed peak meter's arithmetic as the plain loops its optimisations replaced: every
// frame of the whole stream, no pruning, no streaming state. Each value is summed in the order the
// meter sums it (stage 1: 32 products in tap order; stage 2: halved sums and differences of the
// mirrored taps, S + D and S - D; the capped parabola), so every reading equals the meter's to the
// bit (test/analysis/reconstructed-peak.test.ts and kernels.test.ts compare them). The design is
// described in src/analysis/reconstructed-peak.ts; its filter taps are imported from there.
import type { Meter, PcmBlock, StreamInfo } from '../../../src/analysis/audio.ts';
import type { AnalysisEvent } from '../../../src/analysis/events.ts';
import {
  HALF_SAMPLE_TAPS,
  REFINEMENT_CAP,
  STAGE2_HALF_WIDTH,
  quarterPhaseTaps,
  type ReconstructedPeakOptions,
  type ReconstructedPeakResult,
} from '../../../src/analysis/reconstructed-peak.ts';
import { mergeOvers } from './peak-reference.ts';

/** Stage 1 in input order: the point half-way between x[m] and x[m + 1] weighs x[m - 15] .. x[m + 16]. */
const STAGE1 = [...HALF_SAMPLE_TAPS].reverse().concat(HALF_SAMPLE_TAPS);
const w = STAGE2_HALF_WIDTH - 1;
const [g1, g2] = [quarterPhaseTaps(1), quarterPhaseTaps(2)];
// Pair k joins z[j + 1 + k] and z[j - k] of the 2x stream: halved sums (s), differences (d), and
// the half-way phase's taps (h).
const s = [0, 1, 2, 3].map((k) => 0.5 * (g1[w + 1 + k] + g1[w - k]));
const d = [0, 1, 2, 3].map((k) => 0.5 * (g1[w + 1 + k] - g1[w - k]));
const h = [0, 1, 2, 3].map((k) => g2[w + 1 + k]);

/** Frame n's reading: the largest of its eight grid values n + q/8, each local maximum raised by a capped parabola. */
export function baselineReadings(samples: Float32Array): Float64Array {
  const frames = samples.length,
    pad = 20;
  const x = new Float64Array(frames + 2 * pad); // zeros outside the stream
  x.set(samples, pad);
  const u = new Float64Array(frames + 2 * pad);
  for (let m = pad - 2; m < frames + pad + 2; m++) {
    let a = 0;
    for (let t = 0; t < 32; t++) a += STAGE1[t] * x[m - 15 + t];
    u[m] = a;
  }
  /** Grid values at e + 1/8 .. e + 7/8 (padded index e) but the half-way sample u[e]. */
  const quarters = (e: number) => {
    const x0 = x[e - 1],
      x1 = x[e],
      x2 = x[e + 1],
      x3 = x[e + 2];
    const ua = u[e - 2],
      ub = u[e - 1],
      uc = u[e],
      ud = u[e + 1],
      ue = u[e + 2];
    const sa = s[0] * (uc + x1) + s[1] * (x2 + ub) + s[2] * (ud + x0) + s[3] * (x3 + ua);
    const da = d[0] * (uc - x1) + d[1] * (x2 - ub) + d[2] * (ud - x0) + d[3] * (x3 - ua);
    const ya = h[0] * (uc + x1) + h[1] * (x2 + ub) + h[2] * (ud + x0) + h[3] * (x3 + ua);
    const sb = s[0] * (x2 + uc) + s[1] * (ud + x1) + s[2] * (x3 + ub) + s[3] * (ue + x0);
    const db = d[0] * (x2 - uc) + d[1] * (ud - x1) + d[2] * (x3 - ub) + d[3] * (ue - x0);
    const yb = h[0] * (x2 + uc) + h[1] * (ud + x1) + h[2] * (x3 + ub) + h[3] * (ue + x0);
    return [sa + da, ya, sa - da, sb + db, yb, sb - db];
  };
  const readings = new Float64Array(frames);
  let previous = quarters(pad - 1)[5];
  for (let n = 0; n < frames; n++) {
    const e = n + pad;
    const [q1, q2, q3, q5, q6, q7] = quarters(e);
    // From the previous frame's last grid value to the next sample.
    const g = [previous, x[e], q1, q2, q3, u[e], q5, q6, q7, x[e + 1]];
    let peak = 0;
    for (let q = 1; q <= 8; q++) {
      const a = Math.abs(g[q - 1]),
        b = Math.abs(g[q]),
        c = Math.abs(g[q + 1]);
      let value = b;
      if (b >= a && b >= c) {
        const curvature = 2 * b - a - c;
        if (curvature > 0) value = Math.min(b + ((a - c) * (a - c)) / (8 * curvature), b * REFINEMENT_CAP);
      }
      if (value > peak) peak = value;
    }
    readings[n] = peak;
    previous = q7;
  }
  return readings;
}

/** The stream's readings and events in the meter's result shape. */
export class ReconstructedPeakMeter implements Meter<ReconstructedPeakResult> {
  private readonly blocks: Float32Array[][] = [];

  constructor(
    private readonly info: StreamInfo,
    private readonly options: ReconstructedPeakOptions = {},
  ) {}

  push(block: PcmBlock): void {
    this.blocks.push(block.channelData.map((x) => x.slice(0, block.frames)));
  }

  result(): ReconstructedPeakResult {
    const rate = this.info.sampleRate;
    const ceilingDbtp = this.options.overCeilingDbtp ?? -1;
    const ceiling = 10 ** (ceilingDbtp / 20);
    const mergeFrames = Math.round((this.options.overMergeSeconds ?? 0.05) * rate);
    const maxima: number[] = [],
      maxFrames: number[] = [];
    const overs: AnalysisEvent[] = [];
    for (let c = 0; c < this.info.channels; c++) {
      const x = new Float32Array(this.blocks.reduce((n, b) => n + b[c].length, 0));
      this.blocks.reduce((at, b) => {
        x.set(b[c], at);
        return at + b[c].length;
      }, 0);
      const readings = cachedReadings(x);
      let max = 0,
        maxFrame = 0;
      const over: [number, number][] = [];
      readings.forEach((v, n) => {
        if (v > max) {
          max = v;
          maxFrame = n;
        }
        if (v > ceiling) over.push([n, v]);
      });
      maxima.push(max);
      maxFrames.push(maxFrame);
      for (const e of mergeOvers(c, over, mergeFrames)) {
        overs.push({
          kind: 'reconstructed_over',
          ...e,
          startSeconds: e.startFrame / rate,
          endSeconds: e.endFrame / rate,
        });
      }
    }
    overs.sort((a, b) => a.startFrame - b.startFrame || (a.channel ?? 0) - (b.channel ?? 0));
    const toDb = (v: number) => (v > 0 ? 20 * Math.log10(v) : null);
    let best = -1;
    for (let c = 0; c < maxima.length; c++) if (best < 0 || maxima[c] > maxima[best]) best = c;
    const programme = best >= 0 ? maxima[best] : 0;
    return {
      channelPeakDbtp: maxima.map(toDb),
      peakDbtp: toDb(programme),
      peakAtSeconds: programme > 0 ? maxFrames[best] / rate : null,
      overCeilingDbtp: ceilingDbtp,
      // Past the cap the earliest events are kept; the count goes on.
      events: overs.slice(0, this.options.maxEvents ?? 10_000),
      eventsTotal: overs.length,
      eventsByKind: overs.length ? { reconstructed_over: overs.length } : {},
      eventsTruncated: overs.length > (this.options.maxEvents ?? 10_000),
      prunedFrames: 0,
    };
  }
}

/**
 * The same stream is measured under several ceilings and block cuts: its readings are computed
 * once (keyed by the samples' bits).
 */
const cache = new Map<string, Float64Array>();
function cachedReadings(x: Float32Array): Float64Array {
  const bits = new Uint32Array(x.buffer, x.byteOffset, x.length);
  let hash = 2166136261;
  for (let i = 0; i < bits.length; i++) hash = Math.imul(hash ^ bits[i], 16777619);
  const key = `${x.length}:${hash >>> 0}`;
  let readings = cache.get(key);
  if (!readings) {
    if (cache.size >= 64) cache.clear();
    readings = baselineReadings(x);
    cache.set(key, readings);
  }
  return readings;
}
