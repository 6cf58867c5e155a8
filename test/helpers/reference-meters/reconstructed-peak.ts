// Slow, obvious references for src/analysis/reconstructed-peak.ts.
// - bandLimitedPeak: the truth the meter approximates, a long Kaiser-windowed sinc (256 taps,
//   beta 10) evaluated directly at 64 points per sample.
// - ReconstructedPeakMeter: the meter's own algorithm done plainly (the whole signal kept, each
//   8x grid value from its effective 36-tap kernel, no pruning, no tap pairing), to agree within 1e-9.

import type { Meter, PcmBlock, StreamInfo } from '../../../src/analysis/audio.ts';
import { EventLog } from '../../../src/analysis/events.ts';
import {
  gridPhaseKernels,
  REFINEMENT_CAP,
  RECONSTRUCTION_OVERSAMPLING,
  type ReconstructedPeakOptions,
  type ReconstructedPeakResult,
} from '../../../src/analysis/reconstructed-peak.ts';

function besselI0(x: number): number {
  let sum = 1,
    term = 1;
  for (let k = 1; k < 60; k++) {
    term *= (x / (2 * k)) ** 2;
    sum += term;
  }
  return sum;
}

/**
 * Largest |y(t)| for t = n + q/oversampling, 0 <= t < N, of y(t) = sum_k x[k] sinc(t - k) w(t - k)
 * (zeros outside the signal), and the frame n where it is first reached.
 */
export function bandLimitedPeak(
  x: Float32Array | Float64Array,
  oversampling = 64,
  halfWidth = 128,
  beta = 10,
): { peak: number; frame: number } {
  const taps = 2 * halfWidth;
  const table = Array.from({ length: oversampling }, (_, q) =>
    Float64Array.from({ length: taps }, (_, i) => {
      const t = q / oversampling + halfWidth - 1 - i; // distance from tap k = n - halfWidth + 1 + i
      const r = t / halfWidth;
      const sinc = t === 0 ? 1 : Math.sin(Math.PI * t) / (Math.PI * t);
      return Math.abs(r) >= 1 ? 0 : (sinc * besselI0(beta * Math.sqrt(1 - r * r))) / besselI0(beta);
    }),
  );
  let peak = 0,
    frame = 0;
  for (let n = 0; n < x.length; n++) {
    for (let q = 0; q < oversampling; q++) {
      const h = table[q];
      let y = 0;
      for (let i = 0; i < taps; i++) {
        const k = n - halfWidth + 1 + i;
        if (k >= 0 && k < x.length) y += h[i] * x[k];
      }
      if (Math.abs(y) > peak) {
        peak = Math.abs(y);
        frame = n;
      }
    }
  }
  return { peak, frame };
}

/** The meter's reading of frame n of x, from the grid values around it, computed plainly. */
export function frameReadings(x: Float32Array): Float64Array {
  const kernels = gridPhaseKernels();
  const at = (i: number) => (i >= 0 && i < x.length ? x[i] : 0);
  const grid = (n: number, q: number) => {
    let y = 0;
    for (let k = -17; k <= 18; k++) y += kernels[q][k + 17] * at(n + k);
    return y;
  };
  const readings = new Float64Array(x.length);
  for (let n = 0; n < x.length; n++) {
    const g = [grid(n - 1, 7)];
    for (let q = 0; q < RECONSTRUCTION_OVERSAMPLING; q++) g.push(grid(n, q));
    g.push(at(n + 1));
    let peak = 0;
    for (let q = 1; q <= RECONSTRUCTION_OVERSAMPLING; q++) {
      const [a, b, c] = [Math.abs(g[q - 1]), Math.abs(g[q]), Math.abs(g[q + 1])];
      let value = b;
      // A local maximum: the vertex of the parabola through it and its neighbours, capped.
      if (b >= a && b >= c && 2 * b - a - c > 0)
        value = Math.min(b + (a - c) ** 2 / (8 * (2 * b - a - c)), b * REFINEMENT_CAP);
      peak = Math.max(peak, value);
    }
    readings[n] = peak;
  }
  return readings;
}

export class ReconstructedPeakMeter implements Meter<ReconstructedPeakResult> {
  private readonly samples: number[][];
  private readonly ceilingDbtp: number;
  private readonly mergeFrames: number;

  constructor(
    private readonly info: StreamInfo,
    private readonly options: ReconstructedPeakOptions = {},
  ) {
    this.samples = Array.from({ length: info.channels }, () => []);
    this.ceilingDbtp = options.overCeilingDbtp ?? -1;
    this.mergeFrames = Math.round((options.overMergeSeconds ?? 0.05) * info.sampleRate);
  }

  push(block: PcmBlock): void {
    block.channelData.forEach((x, c) => {
      for (let i = 0; i < block.frames; i++) this.samples[c].push(x[i]);
    });
  }

  result(): ReconstructedPeakResult {
    const ceiling = Math.pow(10, this.ceilingDbtp / 20);
    const log = new EventLog(this.info.sampleRate, this.options.maxEvents);
    const maxima: number[] = [],
      frames: number[] = [];
    this.samples.forEach((samples, channel) => {
      const readings = frameReadings(Float32Array.from(samples));
      let max = 0,
        maxFrame = 0;
      let open: { start: number; last: number; count: number; peak: number } | null = null;
      const close = () => {
        if (open)
          log.add({
            kind: 'reconstructed_over',
            channel,
            startFrame: open.start,
            endFrame: open.last + 1,
            peakValue: 20 * Math.log10(open.peak),
            count: open.count,
          });
        open = null;
      };
      readings.forEach((v, n) => {
        if (v > max) {
          max = v;
          maxFrame = n;
        }
        if (v <= ceiling) return;
        if (open && n - open.last <= this.mergeFrames + 1) {
          open.last = n;
          open.count++;
          open.peak = Math.max(open.peak, v);
          return;
        }
        close();
        open = { start: n, last: n, count: 1, peak: v };
      });
      close();
      maxima.push(max);
      frames.push(maxFrame);
    });
    const toDb = (v: number) => (v > 0 ? 20 * Math.log10(v) : null);
    const best = maxima.reduce((b, v, c) => (v > maxima[b] ? c : b), 0);
    const programme = maxima.length ? maxima[best] : 0;
    return {
      channelPeakDbtp: maxima.map(toDb),
      peakDbtp: toDb(programme),
      peakAtSeconds: programme > 0 ? frames[best] / this.info.sampleRate : null,
      overCeilingDbtp: this.ceilingDbtp,
      events: [...log.events].sort((a, b) => a.startFrame - b.startFrame || (a.channel ?? 0) - (b.channel ?? 0)),
      eventsTotal: log.total,
      eventsByKind: log.total ? { reconstructed_over: log.total } : {},
      eventsTruncated: log.truncated,
      prunedFrames: 0,
    };
  }
}
