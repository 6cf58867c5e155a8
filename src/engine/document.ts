// The analysis JSON: one document shape for the CLI, the service and the report. Field names
// carry their unit. A level of digital silence is null (JSON has no -Infinity).

import type { AnalysisEvent, EventKind } from '../analysis/events.ts';
import type { DownmixResult } from '../analysis/downmix.ts';
import { dialogueReading, speechBlockMask, type DialogueReading } from '../analysis/speech/dialogue.ts';
import type { HeadResult } from '../analysis/head.ts';
import { isEventList, METER_NAMES, METERS, type Measurements } from '../analysis/runner.ts';
import type { AudioFormat, DecodeWarning } from '../decode/types.ts';
import { integratedLufsFrom } from '../analysis/loudness.ts';
import { compareDeclaredLoudness, type DeclaredLoudnessComparison } from './declared-loudness.ts';

export const ENGINE_NAME = 'earmark';
export const ENGINE_VERSION = '0.1.0';
export const DOCUMENT_SCHEMA_VERSION = 1;
/** Events kept in one document; counts per kind continue past it. */
export const MAX_DOCUMENT_EVENTS = 5000;

export interface FileInfo {
  name: string;
  sizeBytes: number;
  sha256?: string;
}

export interface ChannelSummary {
  index: number;
  label: string;
  samplePeakDbfs: number | null;
  truePeakDbtp: number | null;
  /** Band-limited reconstruction (analysis/reconstructed-peak.ts): never under-reads as the Annex 2 filter can. */
  reconstructedPeakDbtp: number | null;
  rmsDbfs: number | null;
  /** AES17 reading: RMS referenced to a full-scale sine (full-scale sine = 0 dB). */
  rmsAes17Db: number | null;
  /** Mean sample value, linear (full scale = 1). */
  dcOffset: number;
  dcOffsetDbfs: number | null;
  crestFactorDb: number | null;
  maxFastDbfs: number | null;
  maxSlowDbfs: number | null;
  maxVuDbfs: number | null;
  clippingRuns: number;
  clippedSamples: number;
  /** Dropouts in this channel alone (all-channel ones are in the summary). */
  dropouts: number;
  droppedSeconds: number;
  silentSeconds: number;
  dead: boolean;
}

/** What can be wrong with the file itself, whatever profile judges it. */
export type IntegrityCode = 'data_ends_early' | 'unreadable_data' | 'non_finite_samples' | 'no_audio' | 'too_short';

export interface DocumentIntegrityProblem {
  code: IntegrityCode;
  /** Where the audio stops, or the first bad sample: frames from the start. */
  atSample: number;
  atSeconds: number;
  message: string;
}

/**
 * Fold-down readings (analysis/downmix.ts), measured only when asked (a profile's downmix or
 * mono rules, or the analysis options): each costs extra K-weighting passes.
 */
export interface DownmixReadings {
  measured: boolean;
  /** ITU-R BS.775 Lo/Ro of a 5.0/5.1-or-wider file; null for other layouts or when not measured. */
  loRo: Pick<
    DownmixResult,
    | 'gains'
    | 'integratedLufs'
    | 'truePeakDbtp'
    | 'truePeakAtSeconds'
    | 'clipRuns'
    | 'clippedSamples'
    | 'longestClipRunSamples'
  > | null;
  /** Stereo only: the mono sum L + R, and its loss against the stereo integrated loudness. */
  mono: {
    integratedLufs: number | null;
    /** Stereo integrated loudness minus the mono sum's, in LU: 0 for uncorrelated L and R, -3.01 for identical ones; null when either is not measurable. */
    compatibilityLossLu: number | null;
    /** The mono sum does not pass the -70 LUFS absolute gate while the stereo does (e.g. R is L inverted). */
    cancels: boolean;
  } | null;
  /** Each channel alone through K-weighting and the gates (weight 1.0): not summable, as BS.1770 gates after summing. */
  channelIntegratedLufs: (number | null)[] | null;
  /** Why a reading is missing, in plain words; null when nothing is. */
  note: string | null;
}

/** The document's downmix readings from the meter's result and the programme's own loudness. */
export function downmixReadings(m: Measurements): DownmixReadings {
  const d = m.downmix;
  const stereo = m.loudness.integratedLufs;
  const { gains, integratedLufs, truePeakDbtp, truePeakAtSeconds, clipRuns, clippedSamples, longestClipRunSamples } = d;
  return {
    measured: d.enabled,
    loRo:
      d.kind === 'lo_ro'
        ? { gains, integratedLufs, truePeakDbtp, truePeakAtSeconds, clipRuns, clippedSamples, longestClipRunSamples }
        : null,
    mono:
      d.kind === 'mono_sum'
        ? {
            integratedLufs: d.integratedLufs,
            compatibilityLossLu: stereo !== null && d.integratedLufs !== null ? stereo - d.integratedLufs : null,
            cancels: stereo !== null && d.integratedLufs === null,
          }
        : null,
    channelIntegratedLufs: d.channelIntegratedLufs,
    note: d.note,
  };
}

/**
 * A line-up tone lasts seconds (EBU Tech 3304 opens with 3 s; common practice is longer): a
 * shorter steady sine at the head may be the programme's own opening, whose silences and
 * loudness must still count.
 */
export const LINE_UP_MIN_TONE_SECONDS = 1;

/**
 * Where the line-up at the head ends: the programme start, when the file opens with a line-up
 * tone (a segment of LINE_UP_MIN_TONE_SECONDS or more) or a sync pop; null otherwise. Loudness,
 * dropouts and dead air count from here.
 */
export function lineUpEndFrame(head: HeadResult): number | null {
  const tone = head.toneSegments.some((t) => t.endSeconds - t.startSeconds >= LINE_UP_MIN_TONE_SECONDS);
  return tone || head.headPop !== null ? head.programmeStartFrame : null;
}

/** One 400 ms gating block (ITU-R BS.1770-5 eq. (3)): audio shorter than this has no loudness at all. */
export const MIN_MEASURABLE_SECONDS = 0.4;

export interface AnalysisDocument {
  schemaVersion: number;
  engine: { name: string; version: string };
  file: FileInfo | null;
  format: Omit<AudioFormat, 'declaredLoudness'> & { framesDecoded: number; timeReferenceSeconds: number | null };
  summary: {
    /** The programme's: from the programme start when the file opens with a line-up (tone or sync pop). */
    integratedLufs: number | null;
    /** Where integratedLufs starts: 0, or the programme start after a line-up. */
    integratedFromSeconds: number;
    /** Over the whole file, line-up included. */
    wholeFileIntegratedLufs: number | null;
    loudnessRangeLu: number | null;
    maxMomentaryLufs: number | null;
    maxMomentaryAtSeconds: number | null;
    maxShortTermLufs: number | null;
    maxShortTermAtSeconds: number | null;
    truePeakDbtp: number | null;
    truePeakAtSeconds: number | null;
    reconstructedPeakDbtp: number | null;
    reconstructedPeakAtSeconds: number | null;
    samplePeakDbfs: number | null;
    rmsDbfs: number | null;
    rmsAes17Db: number | null;
    headSilenceSeconds: number;
    tailSilenceSeconds: number;
    longestInternalGapSeconds: number;
    allSilent: boolean;
    clippingRuns: number;
    clippedSamples: number;
    truePeakOvers: number;
    reconstructedOvers: number;
    /** Every dropout: per channel and all-channel together. */
    dropouts: number;
    allChannelDropouts: number;
    deadChannels: number[];
  };
  channels: ChannelSummary[];
  channelPairs: Measurements['channelRelations']['pairs'];
  /** Line-up tone, sync pops and the programme's start (analysis/head.ts). */
  head: Measurements['head'];
  /** Loudness the file's metadata declares (bext v2, iXML), each figure beside our reading; empty when none. */
  declaredLoudness: DeclaredLoudnessComparison[];
  downmix: DownmixReadings;
  /** Dialogue-gated loudness (analysis/speech), measured only when asked: it runs a speech detector. */
  dialogue: DialogueReading;
  events: AnalysisEvent[];
  eventCounts: Partial<Record<EventKind, number>>;
  eventsTruncated: boolean;
  series: {
    momentary: { pointsPerSecond: 10; firstAtSeconds: number; lufs: (number | null)[] };
    shortTerm: { pointsPerSecond: 1; firstAtSeconds: number; lufs: (number | null)[] };
    /** Per gating block, at the block's end as the momentary series: 1 speech, 0 not; null when not measured. */
    speech: { pointsPerSecond: 10; firstAtSeconds: number; isSpeech: (0 | 1)[] } | null;
  };
  settings: {
    overCeilingDbtp: number;
    clipping: { thresholdDbfs: number; minRunSamples: number };
    silence: { thresholdDbfs: number; minDurationSeconds: number };
    dropouts: { minDurationSeconds: number };
  };
  /** Problems with the file itself (cut short, unreadable, non-finite, no audio); empty when intact. */
  integrity: { intact: boolean; problems: DocumentIntegrityProblem[] };
  warnings: DecodeWarning[];
  analysisSeconds: number;
}

/** "2 R": the 1-based channel number and its role, or "all"; how reports, pages and the CLI name channels. */
export function channelName(doc: Pick<AnalysisDocument, 'channels'>, channel: number | null): string {
  return channel === null ? 'all' : `${channel + 1} ${doc.channels[channel]?.label ?? 'unknown'}`;
}

const seconds = (frames: number, rate: number) => `${(frames / rate).toFixed(3)} s`;

/**
 * Integrity from the decoder's warnings and the frame count. A declared length the stream does
 * not reach is a cut file even when the decoder said nothing.
 */
export function integrityOf(
  format: AudioFormat,
  frames: number,
  warnings: readonly DecodeWarning[],
): AnalysisDocument['integrity'] {
  const rate = format.sampleRate;
  const problems: DocumentIntegrityProblem[] = [];
  const add = (code: IntegrityCode, atSample: number, message: string) =>
    problems.push({ code, atSample, atSeconds: atSample / rate, message });
  let endsEarly = false;
  for (const w of warnings) {
    const at = Math.min(w.atFrame ?? frames, frames);
    if (w.code === 'truncated_data') {
      endsEarly = true;
      add('data_ends_early', at, `audio ends at ${seconds(at, rate)}: ${w.message}`);
    } else if (w.code === 'trailing_garbage')
      add('unreadable_data', at, `unreadable data after ${seconds(at, rate)}: ${w.message}`);
    else if (w.code === 'non_finite_samples') add('non_finite_samples', at, w.message);
  }
  if (!endsEarly && format.frames !== null && frames < format.frames) {
    add(
      'data_ends_early',
      frames,
      `audio ends at ${seconds(frames, rate)} but the file declares ${seconds(format.frames, rate)} (${format.frames - frames} frames missing)`,
    );
  }
  if (frames === 0) add('no_audio', 0, 'the file holds no audio frames');
  else if (frames < MIN_MEASURABLE_SECONDS * rate)
    add(
      'too_short',
      frames,
      `the audio is ${seconds(frames, rate)} long, shorter than one 400 ms loudness block: nothing can be measured`,
    );
  problems.sort((a, b) => a.atSample - b.atSample);
  return { intact: problems.length === 0, problems };
}

/**
 * Every `step`-th value of a loudness series from `first`, rounded to 0.01; null where it has none (NaN).
 * A series of hours repeats a few thousand distinct values; each is made once and shared, so an
 * array that holds nulls and numbers costs a reference per point, not a boxed number each
 * (108,000 points for 3 hours: about 0.9 MB instead of 2.6 MB).
 */
function seriesPoints(lufs: Float64Array, first: number, step: number): (number | null)[] {
  // Sized once: a long programme's series grows no garbage copies on the way.
  const points = new Array<number | null>(Math.max(0, Math.ceil((lufs.length - first) / step)));
  const shared = new Map<number, number>();
  for (let i = first, k = 0; i < lufs.length; i += step, k++) {
    if (Number.isNaN(lufs[i])) {
      points[k] = null;
      continue;
    }
    const hundredths = Math.round(lufs[i] * 100);
    let value = shared.get(hundredths);
    if (value === undefined) {
      value = hundredths / 100;
      shared.set(hundredths, value);
    }
    points[k] = value;
  }
  return points;
}

/**
 * Every meter's events in one list by start, then channel (ties keep the registry's meter order),
 * cut at MAX_DOCUMENT_EVENTS. Counts are of every event found, kept or not, in each meter's
 * countOrder (runner.ts METERS), so the JSON's key order stays put.
 */
function collectEvents(m: Measurements): Pick<AnalysisDocument, 'events' | 'eventCounts' | 'eventsTruncated'> {
  const lists = METER_NAMES.flatMap((name) => {
    const result = m[name];
    const contract = METERS[name].events;
    return contract && isEventList(result) ? [{ ...contract, list: result }] : [];
  });
  const all = lists
    .flatMap(({ list }) => list.events)
    .sort((a, b) => a.startFrame - b.startFrame || (a.channel ?? -1) - (b.channel ?? -1));
  const eventCounts: Partial<Record<EventKind, number>> = {};
  const countKind = (kind: EventKind, n: number) => {
    if (n > 0) eventCounts[kind] = (eventCounts[kind] ?? 0) + n;
  };
  for (const { kinds, list } of [...lists].sort((a, b) => a.countOrder - b.countOrder)) {
    for (const kind of kinds) countKind(kind, list.eventsByKind[kind] ?? 0);
  }
  const truncated = all.length > MAX_DOCUMENT_EVENTS || lists.some(({ list }) => list.eventsTruncated);
  return { events: all.slice(0, MAX_DOCUMENT_EVENTS), eventCounts, eventsTruncated: truncated };
}

/** The speech flag of each gating block, at the block's end (0.4 s, 0.5 s, ...). */
function speechSeries(m: Measurements): AnalysisDocument['series']['speech'] {
  if (!m.speech.enabled) return null;
  const blocks = Math.max(0, m.loudness.momentaryLufs.length - 3);
  const mask = speechBlockMask(m.speech.frameIsSpeech, m.speech.frameSeconds, blocks);
  return { pointsPerSecond: 10, firstAtSeconds: 0.4, isSpeech: Array.from(mask, (v) => (v === 1 ? 1 : 0)) };
}

export function buildAnalysisDocument(
  format: AudioFormat,
  m: Measurements,
  warnings: DecodeWarning[],
  file: FileInfo | null,
  analysisSeconds: number,
): AnalysisDocument {
  const rate = format.sampleRate;
  const { events, eventCounts, eventsTruncated } = collectEvents(m);
  // A line-up (tone or sync pop) is not programme: the integrated loudness starts after it.
  const programmeFrom = lineUpEndFrame(m.head) ?? 0;
  const dead = new Set(m.channelRelations.deadChannels);
  const { declaredLoudness, ...formatFields } = format;
  const integratedLufs =
    programmeFrom > 0 ? integratedLufsFrom(m.loudness.momentaryLufs, programmeFrom, rate) : m.loudness.integratedLufs;
  const doc: AnalysisDocument = {
    schemaVersion: DOCUMENT_SCHEMA_VERSION,
    engine: { name: ENGINE_NAME, version: ENGINE_VERSION },
    file,
    format: {
      ...formatFields,
      framesDecoded: m.frames,
      durationSeconds: m.frames / rate,
      timeReferenceSeconds: format.timeReferenceSamples === null ? null : format.timeReferenceSamples / rate,
    },
    summary: {
      integratedLufs,
      integratedFromSeconds: programmeFrom / rate,
      wholeFileIntegratedLufs: m.loudness.integratedLufs,
      loudnessRangeLu: m.loudness.loudnessRangeLu,
      maxMomentaryLufs: m.loudness.maxMomentaryLufs,
      maxMomentaryAtSeconds: m.loudness.maxMomentaryAtSeconds,
      maxShortTermLufs: m.loudness.maxShortTermLufs,
      maxShortTermAtSeconds: m.loudness.maxShortTermAtSeconds,
      truePeakDbtp: m.truePeak.truePeakDbtp,
      truePeakAtSeconds: m.truePeak.truePeakAtSeconds,
      reconstructedPeakDbtp: m.reconstructedPeak.peakDbtp,
      reconstructedPeakAtSeconds: m.reconstructedPeak.peakAtSeconds,
      samplePeakDbfs: m.levels.all.samplePeakDbfs,
      rmsDbfs: m.levels.all.rmsDbfs,
      rmsAes17Db: m.levels.all.rmsAes17Db,
      headSilenceSeconds: m.silence.headSilenceSeconds,
      tailSilenceSeconds: m.silence.tailSilenceSeconds,
      longestInternalGapSeconds: m.silence.longestInternalGapSeconds,
      allSilent: m.silence.allSilent,
      clippingRuns: m.clipping.totalRuns,
      clippedSamples: m.clipping.totalClippedSamples,
      truePeakOvers: m.truePeak.eventsTotal,
      reconstructedOvers: m.reconstructedPeak.eventsTotal,
      dropouts: m.dropouts.eventsTotal,
      allChannelDropouts: m.dropouts.all.dropouts,
      deadChannels: m.channelRelations.deadChannels,
    },
    channels: m.levels.channels.map((level, c) => {
      const timeWeighted = m.timeWeighted.channels[c];
      const clipping = m.clipping.channels[c];
      return {
        index: c,
        label: format.channelLabels[c] ?? 'unknown',
        samplePeakDbfs: level.samplePeakDbfs,
        truePeakDbtp: m.truePeak.channelTruePeakDbtp[c],
        reconstructedPeakDbtp: m.reconstructedPeak.channelPeakDbtp[c],
        rmsDbfs: level.rmsDbfs,
        rmsAes17Db: level.rmsAes17Db,
        dcOffset: level.dcOffsetLinear,
        dcOffsetDbfs: level.dcOffsetDbfs,
        crestFactorDb: level.crestFactorDb,
        maxFastDbfs: timeWeighted.maxFastDbfs,
        maxSlowDbfs: timeWeighted.maxSlowDbfs,
        maxVuDbfs: timeWeighted.maxVuDbfs,
        clippingRuns: clipping.runs,
        clippedSamples: clipping.clippedSamples,
        dropouts: m.dropouts.channels[c]?.dropouts ?? 0,
        droppedSeconds: m.dropouts.channels[c]?.droppedSeconds ?? 0,
        silentSeconds: m.silence.channels[c]?.silentSeconds ?? 0,
        dead: dead.has(c),
      };
    }),
    channelPairs: m.channelRelations.pairs,
    head: m.head,
    declaredLoudness: [],
    downmix: downmixReadings(m),
    dialogue: dialogueReading(m.speech, m.loudness.momentaryLufs, programmeFrom, rate, integratedLufs),
    events,
    eventCounts,
    eventsTruncated,
    series: {
      momentary: { pointsPerSecond: 10, firstAtSeconds: 0.1, lufs: seriesPoints(m.loudness.momentaryLufs, 0, 1) },
      // The 10 Hz short-term series at whole seconds (its 10th value ends at 1 s).
      shortTerm: { pointsPerSecond: 1, firstAtSeconds: 1, lufs: seriesPoints(m.loudness.shortTermLufs, 9, 10) },
      speech: speechSeries(m),
    },
    settings: {
      overCeilingDbtp: m.truePeak.overCeilingDbtp,
      clipping: { thresholdDbfs: 20 * Math.log10(m.clipping.thresholdLinear), minRunSamples: m.clipping.minRunSamples },
      silence: { thresholdDbfs: m.silence.thresholdDbfs, minDurationSeconds: m.silence.minDurationSeconds },
      dropouts: { minDurationSeconds: m.dropouts.minDurationSeconds },
    },
    integrity: integrityOf(format, m.frames, warnings),
    warnings,
    analysisSeconds,
  };
  doc.declaredLoudness = compareDeclaredLoudness(declaredLoudness ?? [], doc.summary);
  return doc;
}
