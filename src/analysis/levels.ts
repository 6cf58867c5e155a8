// Whole-stream sample levels: peak, RMS, DC offset, crest factor, full-scale counts.
// Sums run sample by sample in stream order (Float64), so block cuts never change a result.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { EnvelopeBuilder } from './envelope.ts';
import { SUMS_KERNEL_FRAMES, SumsKernel } from './kernels/sums.ts';
import { amplitudeToDb, powerToDb } from './units.ts';

/** 20 log10(2^0.5): AES17 references RMS to a full-scale sine, so it reads this much higher. */
export const AES17_OFFSET_DB = 10 * Math.log10(2);

export interface LevelMeterOptions {
  /** |x| at or above this counts as a full-scale sample. Default 1.0. */
  fullScaleLinear?: number;
}

export interface ChannelLevels {
  channel: number;
  samplePeakLinear: number;
  samplePeakDbfs: number | null;
  rmsLinear: number;
  /** 20 log10(RMS): full-scale sine reads -3.01. */
  rmsDbfs: number | null;
  /** RMS referenced to a full-scale sine (AES17): rmsDbfs + 3.0103, full-scale sine reads 0. */
  rmsAes17Db: number | null;
  /** Mean sample value (signed). */
  dcOffsetLinear: number;
  dcOffsetDbfs: number | null;
  /** Peak over plain RMS; null when the channel is digital silence. */
  crestFactorDb: number | null;
  /** Samples with |x| >= fullScaleLinear. */
  fullScaleSamples: number;
  /** Samples with |x| > 1 (only float sources can hold them). */
  overFullScaleSamples: number;
}

export interface LevelResult {
  frames: number;
  durationSeconds: number;
  channels: ChannelLevels[];
  /** All channels together: max peak, power mean of the channels' mean squares, summed counts. */
  all: {
    samplePeakLinear: number;
    samplePeakDbfs: number | null;
    /** Index of the channel holding the maximum peak; null when every channel is silent. */
    peakChannel: number | null;
    rmsLinear: number;
    rmsDbfs: number | null;
    rmsAes17Db: number | null;
    fullScaleSamples: number;
    overFullScaleSamples: number;
  };
}

export class LevelMeter implements Meter<LevelResult> {
  private readonly fullScaleLinear: number;
  private readonly peak: Float64Array;
  private readonly sumSquares: Float64Array;
  private readonly sum: Float64Array;
  private readonly fullScaleCount: Float64Array;
  private readonly overCount: Float64Array;
  private frames = 0;
  private readonly envelopes = new EnvelopeBuilder();
  private readonly kernel = new SumsKernel();

  constructor(
    private readonly info: StreamInfo,
    options: LevelMeterOptions = {},
  ) {
    this.fullScaleLinear = options.fullScaleLinear ?? 1;
    const n = info.channels;
    this.peak = new Float64Array(n);
    // Two lanes per channel: [2c] even frames, [2c + 1] odd frames.
    this.sumSquares = new Float64Array(2 * n);
    this.sum = new Float64Array(2 * n);
    this.fullScaleCount = new Float64Array(n);
    this.overCount = new Float64Array(n);
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    const fullScale = this.fullScaleLinear;
    // Two accumulator lanes keyed by the absolute frame parity: halves the add-latency chain
    // and still sums every sample in the same order however the stream is cut.
    const first = this.frames % 2;
    // The peak comes from the shared envelope; the sums from the SIMD kernel (kernels/sums.wat),
    // two lanes in the same order as a scalar two-accumulator loop.
    const blockPeak = this.envelopes.of(block).blockMaxAbs;
    for (let c = 0; c < this.info.channels; c++) {
      const x = block.channelData[c];
      // Lane of the block's even-indexed samples, and of its odd-indexed ones.
      const even = 2 * c + first;
      const odd = 2 * c + 1 - first;
      const sums = this.kernel.sums;
      sums[0] = this.sum[even];
      sums[1] = this.sum[odd];
      sums[2] = this.sumSquares[even];
      sums[3] = this.sumSquares[odd];
      // Pieces of an even number of frames keep the block's even frames in the kernel's lane 0.
      for (let from = 0; from < frames; from += SUMS_KERNEL_FRAMES) {
        const length = Math.min(SUMS_KERNEL_FRAMES, frames - from);
        this.kernel.input.set(x.subarray(from, from + length));
        this.kernel.run(length);
      }
      this.sum[even] = sums[0];
      this.sum[odd] = sums[1];
      this.sumSquares[even] = sums[2];
      this.sumSquares[odd] = sums[3];
      const peak = blockPeak[c];
      if (peak > this.peak[c]) this.peak[c] = peak;
      // Full-scale samples are rare: count them in a second pass only when the block has any.
      if (peak >= fullScale || peak > 1) this.countFullScale(c, x, frames);
    }
    this.frames += frames;
  }

  private countFullScale(c: number, x: Float32Array, frames: number): void {
    for (let i = 0; i < frames; i++) {
      const a = Math.abs(x[i]);
      if (a >= this.fullScaleLinear) this.fullScaleCount[c]++;
      if (a > 1) this.overCount[c]++;
    }
  }

  result(): LevelResult {
    const n = this.info.channels;
    const frames = this.frames;
    const channels: ChannelLevels[] = [];
    let maxPeak = 0;
    let peakChannel: number | null = null;
    let meanSquareSum = 0;
    let fsTotal = 0;
    let overTotal = 0;
    for (let c = 0; c < n; c++) {
      const meanSquare = frames > 0 ? (this.sumSquares[2 * c] + this.sumSquares[2 * c + 1]) / frames : 0;
      const rms = Math.sqrt(meanSquare);
      const dc = frames > 0 ? (this.sum[2 * c] + this.sum[2 * c + 1]) / frames : 0;
      const peak = this.peak[c];
      const rmsDbfs = powerToDb(meanSquare);
      const peakDbfs = amplitudeToDb(peak);
      channels.push({
        channel: c,
        samplePeakLinear: peak,
        samplePeakDbfs: peakDbfs,
        rmsLinear: rms,
        rmsDbfs,
        rmsAes17Db: rmsDbfs === null ? null : rmsDbfs + AES17_OFFSET_DB,
        dcOffsetLinear: dc,
        dcOffsetDbfs: amplitudeToDb(Math.abs(dc)),
        crestFactorDb: rms > 0 ? 20 * Math.log10(peak / rms) : null,
        fullScaleSamples: this.fullScaleCount[c],
        overFullScaleSamples: this.overCount[c],
      });
      if (peak > maxPeak) {
        maxPeak = peak;
        peakChannel = c;
      }
      meanSquareSum += meanSquare;
      fsTotal += this.fullScaleCount[c];
      overTotal += this.overCount[c];
    }
    const allMeanSquare = n > 0 ? meanSquareSum / n : 0;
    const allRmsDbfs = powerToDb(allMeanSquare);
    return {
      frames,
      durationSeconds: frames / this.info.sampleRate,
      channels,
      all: {
        samplePeakLinear: maxPeak,
        samplePeakDbfs: amplitudeToDb(maxPeak),
        peakChannel,
        rmsLinear: Math.sqrt(allMeanSquare),
        rmsDbfs: allRmsDbfs,
        rmsAes17Db: allRmsDbfs === null ? null : allRmsDbfs + AES17_OFFSET_DB,
        fullScaleSamples: fsTotal,
        overFullScaleSamples: overTotal,
      },
    };
  }
}
