// Composes every meter into one pass: each block goes to each meter once, in stream order.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ChannelRelationMeter, type ChannelRelationOptions, type ChannelRelationResult } from './channel-relations.ts';
import { ClippingMeter, type ClippingMeterOptions, type ClippingResult } from './clipping.ts';
import { LevelMeter, type LevelResult } from './levels.ts';
import { LoudnessMeter, type LoudnessOptions, type LoudnessResult } from './loudness.ts';
import { SilenceMeter, type SilenceMeterOptions, type SilenceResult } from './silence.ts';
import { TimeWeightedLevelMeter, type TimeWeightedLevelResult } from './ballistics.ts';
import { TruePeakMeter, type TruePeakOptions, type TruePeakResult } from './true-peak.ts';

export interface AnalysisOptions {
  loudness?: LoudnessOptions;
  truePeak?: TruePeakOptions;
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
  clipping: ClippingResult;
  silence: SilenceResult;
  channelRelations: ChannelRelationResult;
}

export class AnalysisRunner implements Meter<Measurements> {
  private frames = 0;
  private readonly levels: LevelMeter;
  private readonly timeWeighted: TimeWeightedLevelMeter;
  private readonly loudness: LoudnessMeter;
  private readonly truePeak: TruePeakMeter;
  private readonly clipping: ClippingMeter;
  private readonly silence: SilenceMeter;
  private readonly channelRelations: ChannelRelationMeter;
  private readonly meters: Meter<unknown>[];

  constructor(readonly info: StreamInfo, options: AnalysisOptions = {}) {
    this.levels = new LevelMeter(info);
    this.timeWeighted = new TimeWeightedLevelMeter(info);
    this.loudness = new LoudnessMeter(info, options.loudness);
    this.truePeak = new TruePeakMeter(info, options.truePeak);
    this.clipping = new ClippingMeter(info, options.clipping);
    this.silence = new SilenceMeter(info, options.silence);
    this.channelRelations = new ChannelRelationMeter(info, options.channelRelations);
    this.meters = [this.levels, this.timeWeighted, this.loudness, this.truePeak, this.clipping, this.silence, this.channelRelations];
  }

  push(block: PcmBlock): void {
    if (block.channelData.length !== this.info.channels) {
      throw new RangeError(`block has ${block.channelData.length} channels, stream has ${this.info.channels}`);
    }
    for (const meter of this.meters) meter.push(block);
    this.frames += block.frames;
  }

  result(): Measurements {
    return {
      frames: this.frames,
      levels: this.levels.result(),
      timeWeighted: this.timeWeighted.result(),
      loudness: this.loudness.result(),
      truePeak: this.truePeak.result(),
      clipping: this.clipping.result(),
      silence: this.silence.result(),
      channelRelations: this.channelRelations.result(),
    };
  }
}
