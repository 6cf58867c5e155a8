// Peak readings by definition: true peak per ITU-R BS.1770-5 Annex 2 (4x oversampling, the 48-tap
// example filter, every phase at every sample) and the reconstructed peak as its header in
// src/analysis/reconstructed-peak.ts describes it (an 8x grid, each value from its effective taps,
// a capped parabola at each local maximum), with over events merged by the meters' documented rule.
import { gridPhaseKernels, REFINEMENT_CAP } from '../../../src/analysis/reconstructed-peak.ts';

/**
 * BS.1770-5 Annex 2, the 48-tap interpolation filter as its four polyphase columns (row k of
 * phase p is tap 4k + p). Phases 2 and 3 are phases 1 and 0 reversed (the filter is linear phase).
 */
export const ANNEX2_PHASES: readonly (readonly number[])[] = [
  [
    0.001708984375, 0.010986328125, -0.0196533203125, 0.033203125, -0.0594482421875, 0.1373291015625, 0.97216796875,
    -0.102294921875, 0.047607421875, -0.026611328125, 0.014892578125, -0.00830078125,
  ],
  [
    -0.0291748046875, 0.029296875, -0.0517578125, 0.089111328125, -0.16650390625, 0.465087890625, 0.77978515625,
    -0.2003173828125, 0.1015625, -0.0582275390625, 0.0330810546875, -0.0189208984375,
  ],
  [
    -0.0189208984375, 0.0330810546875, -0.0582275390625, 0.1015625, -0.2003173828125, 0.77978515625, 0.465087890625,
    -0.16650390625, 0.089111328125, -0.0517578125, 0.029296875, -0.0291748046875,
  ],
  [
    -0.00830078125, 0.014892578125, -0.026611328125, 0.047607421875, -0.102294921875, 0.97216796875, 0.1373291015625,
    -0.0594482421875, 0.033203125, -0.0196533203125, 0.010986328125, 0.001708984375,
  ],
];

/** Input samples between an interpolated value and the input sample that completes it (half the 12 taps). */
export const ANNEX2_DELAY_FRAMES = 6;

/** Per input sample n, the largest of the four interpolated values that x[n] completes (zeros before the stream). */
export function annex2Interpolated(x: Float32Array): Float64Array {
  const out = new Float64Array(x.length);
  for (let n = 0; n < x.length; n++) {
    for (const phase of ANNEX2_PHASES) {
      let y = 0;
      for (let k = 0; k < 12; k++) if (n - k >= 0) y += phase[k] * x[n - k];
      out[n] = Math.max(out[n], Math.abs(y));
    }
  }
  return out;
}

export interface OverEvent {
  channel: number;
  startFrame: number;
  endFrame: number;
  peakValue: number;
  count: number;
}

/**
 * Overs of one channel: readings above the ceiling, at the frames given; an over at most
 * mergeFrames + 1 frames after the previous one joins its event (the meters' documented merge).
 */
export function mergeOvers(
  channel: number,
  overs: [frame: number, linear: number][],
  mergeFrames: number,
): OverEvent[] {
  const events: OverEvent[] = [];
  let open: (OverEvent & { last: number; peak: number }) | null = null;
  for (const [frame, value] of overs) {
    if (open && frame - open.last <= mergeFrames + 1) {
      open.last = frame;
      open.count++;
      open.peak = Math.max(open.peak, value);
      continue;
    }
    if (open) events.push(close(open));
    open = { channel, startFrame: frame, endFrame: frame + 1, peakValue: 0, count: 1, last: frame, peak: value };
  }
  if (open) events.push(close(open));
  return events;
}

function close(open: OverEvent & { last: number; peak: number }): OverEvent {
  return {
    channel: open.channel,
    startFrame: open.startFrame,
    endFrame: open.last + 1,
    peakValue: 20 * Math.log10(open.peak),
    count: open.count,
  };
}

export interface PeakReading {
  /** Per channel, linear. */
  channelPeaks: number[];
  /** The reading attributed to a frame of a channel (to check where the meter put the peak). */
  readingAt(channel: number, frame: number): number;
  overs: OverEvent[];
}

/** Annex 2 true peak. A sample's own value belongs to its frame; an interpolated value to ANNEX2_DELAY_FRAMES before the sample completing it. */
export function referenceTruePeak(
  channels: Float32Array[],
  sampleRate: number,
  ceilingDbtp: number,
  mergeSeconds = 0.05,
): PeakReading {
  const ceiling = 10 ** (ceilingDbtp / 20);
  const interpolated = channels.map(annex2Interpolated);
  // Nothing is read after the last sample, so the last values interpolated are those it completes.
  const reading = (c: number, n: number) => Math.max(interpolated[c][n], Math.abs(channels[c][n]));
  const mergeFrames = Math.round(mergeSeconds * sampleRate);
  const readingAt = (c: number, f: number) => {
    let v = Math.abs(channels[c][f]);
    const from = f === 0 ? 0 : f + ANNEX2_DELAY_FRAMES;
    for (let n = from; n <= f + ANNEX2_DELAY_FRAMES && n < channels[c].length; n++) v = Math.max(v, interpolated[c][n]);
    return v;
  };
  return {
    channelPeaks: channels.map((x, c) => x.reduce((m, _, n) => Math.max(m, reading(c, n)), 0)),
    readingAt,
    overs: channels.flatMap((x, c) => {
      const overs: [number, number][] = [];
      for (let n = 0; n < x.length; n++)
        if (reading(c, n) > ceiling) overs.push([Math.max(0, n - ANNEX2_DELAY_FRAMES), reading(c, n)]);
      return mergeOvers(c, overs, mergeFrames);
    }),
  };
}

/**
 * The reconstructed peak's reading of each frame n: the largest grid value at n + q/8, q = 0..7, each
 * local maximum (of |value| against its grid neighbours) raised to the vertex of the parabola
 * through the three, at most REFINEMENT_CAP times the value. The grid values are the meter's
 * filter design (its two stages as one 36-tap kernel per phase, weights of x[n - 17 .. n + 18]);
 * zeros lie outside the stream.
 */
export function reconstructedReadings(x: Float32Array): Float64Array {
  const kernels = gridPhaseKernels();
  const frames = x.length,
    pad = 18;
  const padded = new Float64Array(frames + 2 * pad + 2);
  padded.set(x, pad);
  // grid[8 (n + 1) + q] holds the value at n + q/8, for n = -1 .. frames.
  const grid = new Float64Array(8 * (frames + 2));
  for (let n = -1; n <= frames; n++) {
    for (let q = 0; q < 8; q++) {
      const h = kernels[q];
      let y = 0;
      for (let k = 0; k < 36; k++) y += h[k] * padded[n - 17 + k + pad];
      grid[8 * (n + 1) + q] = y;
    }
  }
  const readings = new Float64Array(frames);
  for (let n = 0; n < frames; n++) {
    let peak = 0;
    for (let i = 8 * (n + 1); i < 8 * (n + 2); i++) {
      const [a, b, c] = [Math.abs(grid[i - 1]), Math.abs(grid[i]), Math.abs(grid[i + 1])];
      const curvature = 2 * b - a - c;
      const value =
        b >= a && b >= c && curvature > 0 ? Math.min(b + (a - c) ** 2 / (8 * curvature), b * REFINEMENT_CAP) : b;
      peak = Math.max(peak, value);
    }
    readings[n] = peak;
  }
  return readings;
}

/** The reconstructed peak: frame n reads the band-limited waveform over [n, n + 1). */
export function referenceReconstructedPeak(
  channels: Float32Array[],
  sampleRate: number,
  ceilingDbtp: number,
  mergeSeconds = 0.05,
): PeakReading {
  const ceiling = 10 ** (ceilingDbtp / 20);
  const readings = channels.map(reconstructedReadings);
  const mergeFrames = Math.round(mergeSeconds * sampleRate);
  return {
    channelPeaks: readings.map((r) => r.reduce((m, v) => Math.max(m, v), 0)),
    readingAt: (c, f) => readings[c][f],
    overs: readings.flatMap((r, c) =>
      mergeOvers(
        c,
        [...r].flatMap((v, n): [number, number][] => (v > ceiling ? [[n, v]] : [])),
        mergeFrames,
      ),
    ),
  };
}
