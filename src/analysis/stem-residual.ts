// Stems against their mix: residual = (sum of stems) - mix, per channel, streamed block by block.
// Levels are RMS of the residual relative to the RMS of the whole mix (all channels together),
// so a quiet channel (an LFE, a sparse stem) is judged against the programme, not against itself,
// and dither that sits far under the programme does not break the check in quiet passages.
// Windows of `windowFrames` whose worst channel breaks the tolerance become spans.

import { GrowableFloat64 } from './growable.ts';
import { amplitudeToDb, dbToPower, powerToDb } from './units.ts';
import { EarmarkError } from '../errors/index.ts';

/** Our default: residual 60 dB under the mix. 16-bit dithered stems leave about -89 dBFS RMS (see README). */
export const DEFAULT_RESIDUAL_TOLERANCE_DB = -60;
/** Our default window for locating where the sum breaks the tolerance. */
export const DEFAULT_RESIDUAL_WINDOW_SECONDS = 0.1;
/** Spans kept in the result; `spansTotal` counts them all. */
export const MAX_RESIDUAL_SPANS = 500;

export interface ResidualChannel {
  channel: number;
  /** RMS of this channel of the mix, dBFS (sine peak 1.0 reads -3.01); null for digital silence. */
  mixRmsDbfs: number | null;
  residualRmsDbfs: number | null;
  /** Residual RMS of this channel over the RMS of the whole mix, dB; null when the residual is digital silence. */
  residualRelativeDb: number | null;
  residualPeakDbfs: number | null;
  /** First frame of the residual's peak; null when the residual is digital silence. */
  residualPeakFrame: number | null;
}

export interface ResidualSpan {
  startFrame: number;
  /** Exclusive. */
  endFrame: number;
  /** The channel with the loudest residual window in the span. */
  channel: number;
  /** Loudest window's residual RMS over the whole mix's RMS, dB; null when the mix is digital silence. */
  worstRelativeDb: number | null;
  windows: number;
}

export interface ResidualResult {
  frames: number;
  toleranceDb: number;
  windowFrames: number;
  mixRmsDbfs: number | null;
  residualRmsDbfs: number | null;
  /** Whole residual (all channels) RMS over the whole mix RMS, dB; null when the residual is digital silence. */
  residualRelativeDb: number | null;
  residualPeakDbfs: number | null;
  channels: ResidualChannel[];
  /** Windows whose worst channel breaks the tolerance, merged where they touch; the first MAX_RESIDUAL_SPANS. */
  spans: ResidualSpan[];
  spansTotal: number;
  /** Whether everything is within tolerance: overall, every channel, every window. */
  withinTolerance: boolean;
}

/** Frames summed at a time: the scratch buffer stays small whatever the window. */
const SUM_FRAMES = 4096;

export class StemResidualMeter {
  private readonly channels: number;
  private readonly windowFrames: number;
  private readonly residualSquares: Float64Array;
  private readonly mixSquares: Float64Array;
  private readonly peak: Float64Array;
  private readonly peakFrame: Float64Array;
  private readonly windowSquares: Float64Array;
  private readonly sum: Float64Array;
  private windowFill = 0;
  private frames = 0;
  // Per window: the worst channel's residual mean square, and which channel.
  private readonly windowWorst = new GrowableFloat64();
  private readonly windowChannel = new GrowableFloat64();

  constructor(channels: number, windowFrames: number, expectedFrames = 0) {
    if (!Number.isInteger(channels) || channels < 1)
      throw new EarmarkError('invalid_argument', 'channels must be >= 1');
    if (!Number.isInteger(windowFrames) || windowFrames < 1)
      throw new EarmarkError('invalid_argument', 'the residual window must be at least one frame');
    this.channels = channels;
    this.windowFrames = windowFrames;
    this.residualSquares = new Float64Array(channels);
    this.mixSquares = new Float64Array(channels);
    this.peak = new Float64Array(channels);
    this.peakFrame = new Float64Array(channels).fill(-1);
    this.windowSquares = new Float64Array(channels);
    this.sum = new Float64Array(SUM_FRAMES);
    const windows = Math.ceil(expectedFrames / windowFrames);
    this.windowWorst = new GrowableFloat64(windows);
    this.windowChannel = new GrowableFloat64(windows);
  }

  /** `frames` frames of every stem and of the mix, planar, each with this meter's channel count. */
  push(stems: readonly (readonly Float32Array[])[], mix: readonly Float32Array[], frames: number): void {
    let done = 0;
    while (done < frames) {
      const n = Math.min(frames - done, this.windowFrames - this.windowFill, SUM_FRAMES);
      for (let c = 0; c < this.channels; c++) this.pushChannel(stems, mix, c, done, n);
      done += n;
      this.windowFill += n;
      this.frames += n;
      if (this.windowFill === this.windowFrames) this.closeWindow();
    }
  }

  private pushChannel(
    stems: readonly (readonly Float32Array[])[],
    mix: readonly Float32Array[],
    c: number,
    from: number,
    n: number,
  ): void {
    // Sum the stems in Float64 (exact for up to 2^29 float32 stems of one exponent range).
    const sum = this.sum;
    const m = mix[c];
    for (let i = 0; i < n; i++) sum[i] = -m[from + i];
    for (const stem of stems) {
      const s = stem[c];
      for (let i = 0; i < n; i++) sum[i] += s[from + i];
    }
    let residualSquares = 0;
    let mixSquares = 0;
    let peak = this.peak[c];
    let peakAt = -1;
    for (let i = 0; i < n; i++) {
      const r = sum[i];
      const x = m[from + i];
      residualSquares += r * r;
      mixSquares += x * x;
      const a = Math.abs(r);
      if (a > peak) {
        peak = a;
        peakAt = i;
      }
    }
    if (peakAt >= 0) {
      this.peak[c] = peak;
      this.peakFrame[c] = this.frames + peakAt;
    }
    this.residualSquares[c] += residualSquares;
    this.mixSquares[c] += mixSquares;
    this.windowSquares[c] += residualSquares;
  }

  private closeWindow(): void {
    if (this.windowFill === 0) return;
    let worst = -1;
    let worstChannel = 0;
    for (let c = 0; c < this.channels; c++) {
      if (this.windowSquares[c] > worst) {
        worst = this.windowSquares[c];
        worstChannel = c;
      }
      this.windowSquares[c] = 0;
    }
    this.windowWorst.push(worst / this.windowFill);
    this.windowChannel.push(worstChannel);
    this.windowFill = 0;
  }

  result(toleranceDb = DEFAULT_RESIDUAL_TOLERANCE_DB): ResidualResult {
    this.closeWindow();
    const frames = this.frames;
    const perFrame = (x: number) => (frames > 0 ? x / frames : 0);
    let residualTotal = 0;
    let mixTotal = 0;
    let peak = 0;
    for (let c = 0; c < this.channels; c++) {
      residualTotal += this.residualSquares[c];
      mixTotal += this.mixSquares[c];
      peak = Math.max(peak, this.peak[c]);
    }
    // Mean squares over every sample of every channel: the whole mix's RMS is the reference.
    const mixMeanSquare = perFrame(mixTotal) / this.channels;
    const relative = (meanSquare: number) =>
      meanSquare > 0 && mixMeanSquare > 0 ? 10 * Math.log10(meanSquare / mixMeanSquare) : null;
    // A residual against a silent mix breaks any tolerance; a silent residual meets any.
    const breaks = (meanSquare: number) =>
      meanSquare > 0 && (mixMeanSquare === 0 || meanSquare > mixMeanSquare * dbToPower(toleranceDb));
    const channels: ResidualChannel[] = [];
    let channelBreaks = false;
    for (let c = 0; c < this.channels; c++) {
      const residualMeanSquare = perFrame(this.residualSquares[c]);
      channelBreaks ||= breaks(residualMeanSquare);
      channels.push({
        channel: c,
        mixRmsDbfs: powerToDb(perFrame(this.mixSquares[c])),
        residualRmsDbfs: powerToDb(residualMeanSquare),
        residualRelativeDb: relative(residualMeanSquare),
        residualPeakDbfs: amplitudeToDb(this.peak[c]),
        residualPeakFrame: this.peakFrame[c] >= 0 ? this.peakFrame[c] : null,
      });
    }
    const residualMeanSquare = perFrame(residualTotal) / this.channels;
    const { spans, spansTotal } = this.spans(breaks, relative);
    return {
      frames,
      toleranceDb,
      windowFrames: this.windowFrames,
      mixRmsDbfs: powerToDb(mixMeanSquare),
      residualRmsDbfs: powerToDb(residualMeanSquare),
      residualRelativeDb: relative(residualMeanSquare),
      residualPeakDbfs: amplitudeToDb(peak),
      channels,
      spans,
      spansTotal,
      withinTolerance: !breaks(residualMeanSquare) && !channelBreaks && spansTotal === 0,
    };
  }

  private spans(
    breaks: (ms: number) => boolean,
    relative: (ms: number) => number | null,
  ): { spans: ResidualSpan[]; spansTotal: number } {
    const worst = this.windowWorst.view();
    const channel = this.windowChannel.view();
    const spans: ResidualSpan[] = [];
    let spansTotal = 0;
    let open: { start: number; worstWindow: number; windows: number } | null = null;
    const close = (endWindow: number) => {
      if (!open) return;
      spansTotal++;
      if (spans.length < MAX_RESIDUAL_SPANS)
        spans.push({
          startFrame: open.start * this.windowFrames,
          endFrame: Math.min(endWindow * this.windowFrames, this.frames),
          channel: channel[open.worstWindow],
          worstRelativeDb: relative(worst[open.worstWindow]),
          windows: open.windows,
        });
      open = null;
    };
    for (let w = 0; w < worst.length; w++) {
      if (!breaks(worst[w])) {
        close(w);
        continue;
      }
      if (!open) open = { start: w, worstWindow: w, windows: 0 };
      open.windows++;
      if (worst[w] > worst[open.worstWindow]) open.worstWindow = w;
    }
    close(worst.length);
    return { spans, spansTotal };
  }
}
