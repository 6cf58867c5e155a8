// Composes every meter into one pass: each block goes to each meter once, in stream order.
// A runner may hold only some of the meters (`only`): the parallel runner gives each thread a
// group of whole meters, so every reading comes from the same code on the same samples.

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ChannelRelationMeter, type ChannelRelationOptions, type ChannelRelationResult } from './channel-relations.ts';
import { EnvelopeBuilder } from './envelope.ts';
import { HeadMeter, type HeadMeterOptions, type HeadResult } from './head.ts';
import type { EventKind, EventList } from './events.ts';
import { ClippingMeter, type ClippingMeterOptions, type ClippingResult } from './clipping.ts';
import { DownmixMeter, type DownmixOptions, type DownmixResult } from './downmix.ts';
import { DropoutMeter, type DropoutOptions, type DropoutResult } from './dropouts.ts';
import { LevelMeter, type LevelResult } from './levels.ts';
import { LoudnessMeter, type LoudnessOptions, type LoudnessResult } from './loudness.ts';
import { SilenceMeter, type SilenceMeterOptions, type SilenceResult } from './silence.ts';
import { TimeWeightedLevelMeter, type TimeWeightedLevelResult } from './ballistics.ts';
import { TruePeakMeter, type TruePeakOptions, type TruePeakResult } from './true-peak.ts';
import { SpeechMeter, type SpeechClassifier, type SpeechOptions, type SpeechResult } from './speech/meter.ts';
import {
  ReconstructedPeakMeter,
  type ReconstructedPeakOptions,
  type ReconstructedPeakResult,
} from './reconstructed-peak.ts';

export interface AnalysisOptions {
  loudness?: LoudnessOptions;
  truePeak?: TruePeakOptions;
  reconstructedPeak?: ReconstructedPeakOptions;
  dropouts?: DropoutOptions;
  clipping?: ClippingMeterOptions;
  silence?: SilenceMeterOptions;
  channelRelations?: ChannelRelationOptions;
  downmix?: DownmixOptions;
  /** The silence threshold is the silence meter's unless set here. */
  head?: HeadMeterOptions;
  speech?: SpeechOptions;
}

/** What some meters need besides options, made by the engine (not sent to meter threads). */
export interface MeterContext {
  /** The speech detector, when options.speech asks for it. */
  speechClassifier?: SpeechClassifier;
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
  downmix: DownmixResult;
  head: HeadResult;
  speech: SpeechResult;
}

export type MeterName = Exclude<keyof Measurements, 'frames'>;

/**
 * What the runner, the thread planner and the analysis document know of a meter. Each meter runs
 * whole on one thread, so results are never combined across threads.
 */
export interface MeterDescriptor<R> {
  create: (info: StreamInfo, options: AnalysisOptions, context?: MeterContext) => Meter<R>;
  /** Runs on the decoding thread only: its work is asynchronous (settle) or needs the context. */
  mainThreadOnly?: true;
  /** Relative thread cost: ms per stereo audio minute, the meter's time in a one-thread run of the
   * 60-minute benchmark file (bench/meters.ts); the parallel runner balances threads by it. */
  costMsPerMinute: number;
  /** Reads the block envelope (envelope.ts); a runner without such meters skips that pass. */
  readsEnvelope: boolean;
  /**
   * For a result that lists events (EventList): the kinds it holds, and where its counts go among
   * the analysis document's eventCounts keys (lowest first; the JSON's key order). Null otherwise.
   */
  events: R extends EventList ? { kinds: readonly [EventKind, ...EventKind[]]; countOrder: number } : null;
}

/** Every meter, in the order the runner feeds them and the document lists their events. */
export const METERS: { readonly [K in MeterName]: MeterDescriptor<Measurements[K]> } = {
  levels: { create: (info) => new LevelMeter(info), costMsPerMinute: 2.6, readsEnvelope: true, events: null },
  timeWeighted: {
    create: (info) => new TimeWeightedLevelMeter(info),
    costMsPerMinute: 6,
    readsEnvelope: false,
    events: null,
  },
  loudness: {
    create: (info, o) => new LoudnessMeter(info, o.loudness),
    costMsPerMinute: 18,
    readsEnvelope: false,
    events: { kinds: ['loud_momentary', 'loud_short_term'], countOrder: 3 },
  },
  truePeak: {
    create: (info, o) => new TruePeakMeter(info, o.truePeak),
    costMsPerMinute: 2.8,
    readsEnvelope: true,
    events: { kinds: ['true_peak_over'], countOrder: 0 },
  },
  reconstructedPeak: {
    create: (info, o) => new ReconstructedPeakMeter(info, o.reconstructedPeak),
    costMsPerMinute: 4.4,
    readsEnvelope: true,
    events: { kinds: ['reconstructed_over'], countOrder: 1 },
  },
  clipping: {
    create: (info, o) => new ClippingMeter(info, o.clipping),
    costMsPerMinute: 0.5,
    readsEnvelope: true,
    events: { kinds: ['clipping'], countOrder: 4 },
  },
  dropouts: {
    create: (info, o) => new DropoutMeter(info, o.dropouts),
    costMsPerMinute: 2,
    readsEnvelope: true,
    events: { kinds: ['dropout'], countOrder: 2 },
  },
  silence: {
    create: (info, o) => new SilenceMeter(info, o.silence),
    costMsPerMinute: 2.3,
    readsEnvelope: true,
    events: { kinds: ['silence'], countOrder: 5 },
  },
  channelRelations: {
    create: (info, o) => new ChannelRelationMeter(info, o.channelRelations),
    costMsPerMinute: 4.5,
    readsEnvelope: false,
    events: { kinds: ['dead_channel', 'duplicate_channel', 'inverted_channel', 'phase_problem'], countOrder: 6 },
  },
  // Off unless asked (options.downmix.enabled); its cost when on is in README (Downmix and mono).
  downmix: {
    create: (info, o) => new DownmixMeter(info, o.downmix),
    costMsPerMinute: 0,
    readsEnvelope: false,
    events: { kinds: ['downmix_clipping'], countOrder: 7 },
  },
  head: {
    create: (info, o) => new HeadMeter(info, { silenceThresholdDbfs: o.silence?.thresholdDbfs, ...o.head }),
    // Not from bench/meters.ts: a fifth of the silence meter's time in alternating runs over 10 generated minutes.
    costMsPerMinute: 0.5,
    readsEnvelope: true,
    events: null,
  },
  // Off unless asked (options.speech.enabled); its cost when on is SPEECH_COST_MS_PER_MINUTE.
  speech: {
    create: (info, o, context) => new SpeechMeter(info, o.speech, context?.speechClassifier ?? null),
    costMsPerMinute: 0,
    readsEnvelope: false,
    events: null,
    mainThreadOnly: true,
  },
};

/** The speech meter's time when on: about 180x real time in the analysis (bench/dialogue.ts). */
export const SPEECH_COST_MS_PER_MINUTE = 330;

/** A meter whose work finishes asynchronously after push: the runner awaits settle() per block. */
interface SettlingMeter {
  settle(): Promise<void>;
}
function settles(meter: object): meter is SettlingMeter {
  return 'settle' in meter && typeof meter.settle === 'function';
}

export const METER_NAMES = Object.keys(METERS) as MeterName[];
/** Meters that read the block envelope; a runner without them skips that pass. */
export const ENVELOPE_METERS: readonly MeterName[] = METER_NAMES.filter((name) => METERS[name].readsEnvelope);

/** A meter result that lists events: checked, so a consumer needs no per-meter code. */
export function isEventList(result: Measurements[MeterName]): result is Extract<Measurements[MeterName], EventList> {
  return 'events' in result && 'eventsTotal' in result && 'eventsTruncated' in result && 'eventsByKind' in result;
}

/** Whether every meter's field (and frames) is present: a runner of all the meters gives such a result. */
export function isCompleteMeasurements(m: Partial<Measurements>): m is Measurements {
  return m.frames !== undefined && METER_NAMES.every((name) => m[name] !== undefined);
}

export class AnalysisRunner implements Meter<Measurements> {
  private frames = 0;
  /** The meters run, in registry order. */
  private readonly meters: Meter<unknown>[] = [];
  /** Per meter run: puts its result in a partial Measurements. */
  private readonly collectors: ((out: Partial<Measurements>) => void)[] = [];
  private readonly envelopes: EnvelopeBuilder | null;
  private readonly settling: SettlingMeter[] = [];

  constructor(
    readonly info: StreamInfo,
    options: AnalysisOptions = {},
    only: readonly MeterName[] = METER_NAMES,
    private readonly context: MeterContext = {},
  ) {
    const names = METER_NAMES.filter((name) => only.includes(name));
    for (const name of names) this.start(name, options);
    this.envelopes = names.some((name) => ENVELOPE_METERS.includes(name)) ? new EnvelopeBuilder() : null;
  }

  private start<K extends MeterName>(name: K, options: AnalysisOptions): void {
    const meter: Meter<Measurements[K]> = METERS[name].create(this.info, options, this.context);
    this.meters.push(meter);
    if (settles(meter)) this.settling.push(meter);
    this.collectors.push((out) => {
      out[name] = meter.result();
    });
  }

  push(block: PcmBlock): void {
    if (block.channelData.length !== this.info.channels) {
      throw new RangeError(`block has ${block.channelData.length} channels, stream has ${this.info.channels}`);
    }
    // One envelope pass for every meter that reads it.
    const shared: PcmBlock =
      block.envelope || !this.envelopes ? block : { ...block, envelope: this.envelopes.build(block) };
    for (const meter of this.meters) meter.push(shared);
    this.frames += block.frames;
  }

  /** Waits for the meters whose work on the blocks pushed so far is asynchronous. */
  async settle(): Promise<void> {
    for (const meter of this.settling) await meter.settle();
  }

  /** Every meter's result; only a runner of all the meters has one (see partialResult). */
  result(): Measurements {
    const m = this.partialResult();
    if (!isCompleteMeasurements(m))
      throw new Error('result() needs every meter; a runner of some meters gives partialResult()');
    return m;
  }

  /** Frames and the result of each meter run, in registry order; the other fields are absent. */
  partialResult(): Partial<Measurements> {
    const out: Partial<Measurements> = { frames: this.frames };
    for (const collect of this.collectors) collect(out);
    return out;
  }
}
