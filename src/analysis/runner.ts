// Composes every meter into one pass: each block goes to each meter once, in stream order.
// A runner may hold only some of the meters (`only`): the parallel runner gives each thread a
// group of whole meters, so every reading comes from the same code on the same samples.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ChannelRelationMeter, type ChannelRelationOptions, type ChannelRelationResult } from './channel-relations.ts';
import { EnvelopeBuilder } from './envelope.ts';
import { ClippingMeter, type ClippingMeterOptions, type ClippingResult } from './clipping.ts';
import { DropoutMeter, type DropoutOptions, type DropoutResult } from './dropouts.ts';
import { LevelMeter, type LevelResult } from './levels.ts';
import { LoudnessMeter, type LoudnessOptions, type LoudnessResult } from './loudness.ts';
import { SilenceMeter, type SilenceMeterOptions, type SilenceResult } from './silence.ts';
import { TimeWeightedLevelMeter, type TimeWeightedLevelResult } from './ballistics.ts';
import { TruePeakMeter, type TruePeakOptions, type TruePeakResult } from './true-peak.ts';
import { ReconstructedPeakMeter, type ReconstructedPeakOptions, type ReconstructedPeakResult } from './reconstructed-peak.ts';

export interface AnalysisOptions {
  loudness?: LoudnessOptions;
  truePeak?: TruePeakOptions;
  reconstructedPeak?: ReconstructedPeakOptions;
  dropouts?: DropoutOptions;
  clipping?: ClippingMeterOptions;
  silence?: SilenceMeterOptions;
  channelRelations?: ChannelRelationOptions;
}

export interface Measurements {
  frames: number;
  levels: LevelResult;
  timeWeighted: TimeWeightedLevelResult;
  loudness: LoudnessResult;
  truePeak: TruePeakResult;
  reconstructedPeak: ReconstructedPeakResult;
  clipping: ClippingResult;
  dropouts: DropoutResult;
  silence: SilenceResult;
  channelRelations: ChannelRelationResult;
}

export type MeterName = Exclude<keyof Measurements, 'frames'>;

const METERS: { [K in MeterName]: (info: StreamInfo, options: AnalysisOptions) => Meter<Measurements[K]> } = {
  levels: (info) => new LevelMeter(info),
  timeWeighted: (info) => new TimeWeightedLevelMeter(info),
  loudness: (info, o) => new LoudnessMeter(info, o.loudness),
  truePeak: (info, o) => new TruePeakMeter(info, o.truePeak),
  reconstructedPeak: (info, o) => new ReconstructedPeakMeter(info, o.reconstructedPeak),
  clipping: (info, o) => new ClippingMeter(info, o.clipping),
  dropouts: (info, o) => new DropoutMeter(info, o.dropouts),
  silence: (info, o) => new SilenceMeter(info, o.silence),
  channelRelations: (info, o) => new ChannelRelationMeter(info, o.channelRelations),
};

export const METER_NAMES = Object.keys(METERS) as MeterName[];
/** Meters that read the block envelope (envelope.ts); a runner without them skips that pass. */
export const ENVELOPE_METERS: readonly MeterName[] = ['levels', 'truePeak', 'reconstructedPeak', 'clipping', 'dropouts', 'silence'];

export class AnalysisRunner implements Meter<Measurements> {
  private frames = 0;
  private readonly meters: [MeterName, Meter<unknown>][];
  private readonly envelopes: EnvelopeBuilder | null;

  constructor(readonly info: StreamInfo, options: AnalysisOptions = {}, only: readonly MeterName[] = METER_NAMES) {
    this.meters = METER_NAMES.filter((name) => only.includes(name)).map((name) => [name, METERS[name](info, options)]);
    this.envelopes = this.meters.some(([name]) => ENVELOPE_METERS.includes(name)) ? new EnvelopeBuilder() : null;
  }

  push(block: PcmBlock): void {
    if (block.channelData.length !== this.info.channels) {
      throw new RangeError(`block has ${block.channelData.length} channels, stream has ${this.info.channels}`);
    }
    // One envelope pass for every meter that reads it.
    const shared: PcmBlock = block.envelope || !this.envelopes ? block : { ...block, envelope: this.envelopes.build(block) };
    for (const [, meter] of this.meters) meter.push(shared);
    this.frames += block.frames;
  }

  /** Every meter's result; with `only`, the other fields are absent (see partialResult). */
  result(): Measurements {
    return this.partialResult() as Measurements;
  }

  partialResult(): Partial<Measurements> {
    const out: Partial<Measurements> = { frames: this.frames };
    for (const [name, meter] of this.meters) (out as Record<string, unknown>)[name] = meter.result();
    return out;
  }
}
