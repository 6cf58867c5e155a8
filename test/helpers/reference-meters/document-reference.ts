// Every reading of an analysis document (src/engine/document.ts) checked against the references
// in this folder, computed from the samples the decoder delivered.
import { expect } from 'vitest';
import type { AnalysisDocument } from '../../../src/engine/document.ts';
import { referenceLoudness, type LoudnessLimits } from './loudness-reference.ts';
import { referenceReconstructedPeak, referenceTruePeak, type PeakReading } from './peak-reference.ts';
import { programmeRmsDbfs, referenceLevels, referenceTimeWeighted } from './level-reference.ts';
import { referenceClipping, referenceDropouts, referenceSilence, type RunEvent } from './run-reference.ts';
import { referenceRelations } from './relation-reference.ts';

/** The options the documents under test were analysed with (AnalysisOptions), as the references read them. */
export interface ReferenceSettings {
  loudness: LoudnessLimits;
  overCeilingDbtp: number;
  silence: { thresholdDbfs: number; minDurationSeconds: number };
}

// Tolerances. Readings from sums, filters and logarithms in another order of operations differ
// from the meters' by rounding: about 1e-13 relative over a few million samples. 1e-9 (dB, LU,
// correlation) leaves room for that and is far below what a changed rule moves.
const LEVEL_TOLERANCE = 1e-9;
/** The document rounds series points to 0.01 LU: a point lies within half of that of the exact value. */
const SERIES_TOLERANCE = 0.005 + 1e-9;
/** The default clip threshold, -0.01 dBFS, and minimum run, 3 samples (clipping.ts, common practice). */
const CLIP_THRESHOLD_DBFS = -0.01;
const CLIP_MIN_RUN = 3;

function near(
  actual: number | null | undefined,
  expected: number | null | undefined,
  tolerance: number,
  path: string,
): void {
  if (expected === null || expected === undefined || actual === null || actual === undefined) {
    expect(actual, path).toBe(expected);
    return;
  }
  expect(Math.abs(actual - expected), `${path}: ${actual} against reference ${expected}`).toBeLessThanOrEqual(
    tolerance,
  );
}

const toDb = (linear: number) => (linear > 0 ? 20 * Math.log10(linear) : null);

type Event = AnalysisDocument['events'][number];
type Expected = Omit<Event, 'startSeconds' | 'endSeconds' | 'kind'>;

/** One kind's events, document against reference: frames, channels and counts exact, peaks within tolerance. */
function sameEvents(doc: AnalysisDocument, kind: Event['kind'], expected: Expected[], rate: number): void {
  const order = (a: Expected, b: Expected) =>
    a.startFrame - b.startFrame || (a.channel ?? -1) - (b.channel ?? -1) || a.endFrame - b.endFrame;
  const actual = doc.events.filter((e) => e.kind === kind).sort(order);
  const want = [...expected].sort(order);
  const describe = (e: Expected) =>
    `${e.channel}/${e.otherChannel ?? '-'} ${e.startFrame}-${e.endFrame} x${e.count ?? '-'}`;
  expect(actual.map(describe), `${kind} events`).toEqual(want.map(describe));
  actual.forEach((e, i) => {
    near(e.peakValue, want[i].peakValue, LEVEL_TOLERANCE, `${kind} event ${i} peakValue`);
    expect([e.startSeconds, e.endSeconds], `${kind} event ${i} seconds`).toEqual([
      e.startFrame / rate,
      e.endFrame / rate,
    ]);
  });
  expect(doc.eventCounts[kind], `eventCounts.${kind}`).toBe(expected.length > 0 ? expected.length : undefined);
}

/** The reported peak position: some channel reads the programme peak at that frame. */
function peakPlace(reading: PeakReading, atSeconds: number | null, rate: number, path: string): void {
  const peak = Math.max(0, ...reading.channelPeaks);
  if (peak === 0) {
    expect(atSeconds, path).toBeNull();
    return;
  }
  const frame = Math.round((atSeconds ?? Number.NaN) * rate);
  const best = Math.max(...reading.channelPeaks.map((_, c) => reading.readingAt(c, frame)));
  near(best / peak, 1, LEVEL_TOLERANCE, `${path} (frame ${frame})`);
}

export type ReferenceReadings = ReturnType<typeof referenceReadings>;

/** Every reference reading of a stream, computed once for the documents that read it. */
export function referenceReadings(
  channels: Float32Array[],
  labels: readonly string[],
  rate: number,
  settings: ReferenceSettings,
) {
  return {
    frames: channels[0].length,
    loudness: referenceLoudness(channels, labels, rate, settings.loudness),
    truePeak: referenceTruePeak(channels, rate, settings.overCeilingDbtp),
    reconstructed: referenceReconstructedPeak(channels, rate, settings.overCeilingDbtp),
    levels: channels.map(referenceLevels),
    timeWeighted: channels.map((x) => referenceTimeWeighted(x, rate)),
    clipping: referenceClipping(channels, 10 ** (CLIP_THRESHOLD_DBFS / 20), CLIP_MIN_RUN),
    silence: referenceSilence(channels, rate, settings.silence.thresholdDbfs, settings.silence.minDurationSeconds),
    dropouts: referenceDropouts(channels, rate),
    relations: referenceRelations(channels, labels, rate),
  };
}

export function expectDocumentMatchesReferences(
  doc: AnalysisDocument,
  reference: ReferenceReadings,
  settings: ReferenceSettings,
): void {
  const rate = doc.format.sampleRate;
  const labels = doc.format.channelLabels;
  const { frames, loudness, truePeak, reconstructed, levels, clipping, silence, dropouts, relations } = reference;
  expect(doc.format.framesDecoded, 'framesDecoded').toBe(frames);
  expect(doc.integrity.intact, 'integrity').toBe(true);
  expect(doc.eventsTruncated, 'eventsTruncated').toBe(false);
  expect(doc.warnings, 'warnings').toEqual([]);

  // Loudness: BS.1770-5 and EBU Tech 3342.
  const s = doc.summary;
  // The reference meters read the whole file; after a line-up the headline reading starts at the
  // programme (checked against a programme-only file in test/profiles/head-rules.test.ts).
  near(s.wholeFileIntegratedLufs, loudness.integratedLufs, LEVEL_TOLERANCE, 'wholeFileIntegratedLufs');
  if (s.integratedFromSeconds === 0) near(s.integratedLufs, loudness.integratedLufs, LEVEL_TOLERANCE, 'integratedLufs');
  near(s.loudnessRangeLu, loudness.loudnessRangeLu, LEVEL_TOLERANCE, 'loudnessRangeLu');
  near(s.maxMomentaryLufs, loudness.maxMomentaryLufs, LEVEL_TOLERANCE, 'maxMomentaryLufs');
  near(s.maxShortTermLufs, loudness.maxShortTermLufs, LEVEL_TOLERANCE, 'maxShortTermLufs');
  // Where a maximum is: the window ending there reads the maximum (equal windows may tie).
  for (const [value, at, seconds, path] of [
    [s.maxMomentaryLufs, s.maxMomentaryAtSeconds, 0.4, 'maxMomentaryAtSeconds'],
    [s.maxShortTermLufs, s.maxShortTermAtSeconds, 3, 'maxShortTermAtSeconds'],
  ] as const) {
    if (value === null) {
      expect(at, path).toBeNull();
      continue;
    }
    near(
      loudness.windowLufs(Math.round((at ?? Number.NaN) * rate), Math.round(seconds * rate)),
      value,
      LEVEL_TOLERANCE,
      path,
    );
  }
  const series = (values: number[]) => values.map((v) => (Number.isNaN(v) ? null : v));
  const momentary = series(loudness.momentary);
  const shortTerm = series(loudness.shortTerm).filter((_, i) => i % 10 === 9);
  expect(doc.series.momentary.lufs.length, 'momentary series length').toBe(momentary.length);
  expect(doc.series.shortTerm.lufs.length, 'short-term series length').toBe(shortTerm.length);
  doc.series.momentary.lufs.forEach((v, i) => near(v, momentary[i], SERIES_TOLERANCE, `momentary[${i}]`));
  doc.series.shortTerm.lufs.forEach((v, i) => near(v, shortTerm[i], SERIES_TOLERANCE, `shortTerm[${i}]`));
  for (const kind of ['loud_momentary', 'loud_short_term'] as const) {
    sameEvents(
      doc,
      kind,
      loudness.events.filter((e) => e.kind === kind).map((e) => ({ ...e, channel: null })),
      rate,
    );
  }

  // Peaks.
  near(s.truePeakDbtp, toDb(Math.max(0, ...truePeak.channelPeaks)), LEVEL_TOLERANCE, 'truePeakDbtp');
  near(
    s.reconstructedPeakDbtp,
    toDb(Math.max(0, ...reconstructed.channelPeaks)),
    LEVEL_TOLERANCE,
    'reconstructedPeakDbtp',
  );
  peakPlace(truePeak, s.truePeakAtSeconds, rate, 'truePeakAtSeconds');
  peakPlace(reconstructed, s.reconstructedPeakAtSeconds, rate, 'reconstructedPeakAtSeconds');
  sameEvents(doc, 'true_peak_over', truePeak.overs, rate);
  sameEvents(doc, 'reconstructed_over', reconstructed.overs, rate);
  expect([s.truePeakOvers, s.reconstructedOvers], 'over counts').toEqual([
    truePeak.overs.length,
    reconstructed.overs.length,
  ]);

  // Levels and time-weighted levels.
  near(s.samplePeakDbfs, toDb(Math.max(0, ...levels.map((l) => l.samplePeak))), LEVEL_TOLERANCE, 'samplePeakDbfs');
  const rms = programmeRmsDbfs(levels);
  near(s.rmsDbfs, rms, LEVEL_TOLERANCE, 'rmsDbfs');
  near(s.rmsAes17Db, rms === null ? null : rms + 10 * Math.log10(2), LEVEL_TOLERANCE, 'rmsAes17Db');

  // Runs.
  sameEvents(doc, 'clipping', clipping, rate);
  sameEvents(doc, 'silence', silence.events, rate);
  sameEvents(doc, 'dropout', dropouts, rate);
  expect(
    {
      clippingRuns: s.clippingRuns,
      clippedSamples: s.clippedSamples,
      dropouts: s.dropouts,
      allChannelDropouts: s.allChannelDropouts,
      headSilenceSeconds: s.headSilenceSeconds,
      tailSilenceSeconds: s.tailSilenceSeconds,
      allSilent: s.allSilent,
      longestInternalGapSeconds: s.longestInternalGapSeconds,
    },
    'run summary',
  ).toEqual({
    clippingRuns: clipping.length,
    clippedSamples: clipping.reduce((n, e) => n + e.endFrame - e.startFrame, 0),
    dropouts: dropouts.length,
    allChannelDropouts: dropouts.filter((e) => e.channel === null).length,
    headSilenceSeconds: silence.headFrames / rate,
    tailSilenceSeconds: silence.tailFrames / rate,
    allSilent: silence.allSilent,
    longestInternalGapSeconds: silence.longestGapFrames / rate,
  });

  // Channel relations.
  expect(s.deadChannels, 'deadChannels').toEqual(relations.deadChannels);
  expect(doc.channelPairs.length, 'channel pairs').toBe(relations.pairs.length);
  doc.channelPairs.forEach((pair, k) => {
    const { correlation, minWindowCorrelation, ...flags } = relations.pairs[k];
    const { correlation: actualCorrelation, minWindowCorrelation: actualMin, ...actualFlags } = pair;
    expect(actualFlags, `pair ${k}`).toEqual(flags);
    near(actualCorrelation, correlation, LEVEL_TOLERANCE, `pair ${k} correlation`);
    near(actualMin, minWindowCorrelation, LEVEL_TOLERANCE, `pair ${k} minWindowCorrelation`);
  });
  for (const kind of ['dead_channel', 'duplicate_channel', 'inverted_channel', 'phase_problem'] as const) {
    sameEvents(
      doc,
      kind,
      relations.events.filter((e) => e.kind === kind),
      rate,
    );
  }

  // Per channel.
  expect(doc.channels.length, 'channels').toBe(levels.length);
  doc.channels.forEach((ch, c) => {
    const l = levels[c];
    const path = `channel ${c}`;
    const readings: [string, number | null, number | null][] = [
      ['samplePeakDbfs', ch.samplePeakDbfs, l.samplePeakDbfs],
      ['truePeakDbtp', ch.truePeakDbtp, toDb(truePeak.channelPeaks[c])],
      ['reconstructedPeakDbtp', ch.reconstructedPeakDbtp, toDb(reconstructed.channelPeaks[c])],
      ['rmsDbfs', ch.rmsDbfs, l.rmsDbfs],
      ['rmsAes17Db', ch.rmsAes17Db, l.rmsAes17Db],
      ['dcOffsetDbfs', ch.dcOffsetDbfs, l.dcOffsetDbfs],
      ['crestFactorDb', ch.crestFactorDb, l.crestFactorDb],
      ['maxFastDbfs', ch.maxFastDbfs, reference.timeWeighted[c].maxFastDbfs],
      ['maxSlowDbfs', ch.maxSlowDbfs, reference.timeWeighted[c].maxSlowDbfs],
      ['maxVuDbfs', ch.maxVuDbfs, reference.timeWeighted[c].maxVuDbfs],
    ];
    for (const [key, actual, value] of readings) near(actual, value, LEVEL_TOLERANCE, `${path} ${key}`);
    // The mean of up to a few million samples, summed in another order: rounding near 1e-16 each.
    near(ch.dcOffset, l.dcOffset, 1e-12, `${path} dcOffset`);
    const mine = (events: RunEvent[]) => events.filter((e) => e.channel === c);
    const frameSum = (events: RunEvent[]) => events.reduce((n, e) => n + e.endFrame - e.startFrame, 0);
    expect(
      {
        index: ch.index,
        label: ch.label,
        clippingRuns: ch.clippingRuns,
        clippedSamples: ch.clippedSamples,
        dropouts: ch.dropouts,
        droppedSeconds: ch.droppedSeconds,
        silentSeconds: ch.silentSeconds,
        dead: ch.dead,
      },
      path,
    ).toEqual({
      index: c,
      label: labels[c],
      clippingRuns: mine(clipping).length,
      clippedSamples: frameSum(mine(clipping)),
      dropouts: mine(dropouts).length,
      droppedSeconds: frameSum(mine(dropouts)) / rate,
      silentSeconds: silence.silentFrames[c] / rate,
      dead: relations.deadChannels.includes(c),
    });
  });

  // The threshold is reported back from its linear value: a round trip through 10^(x/20).
  near(doc.settings.clipping.thresholdDbfs, CLIP_THRESHOLD_DBFS, 1e-12, 'settings.clipping.thresholdDbfs');
  expect(doc.settings, 'settings').toEqual({
    overCeilingDbtp: settings.overCeilingDbtp,
    clipping: { thresholdDbfs: doc.settings.clipping.thresholdDbfs, minRunSamples: CLIP_MIN_RUN },
    silence: settings.silence,
    dropouts: { minDurationSeconds: 0.001 },
  });
  // Every kind the document counts is among those compared above.
  const checked = new Set([
    'loud_momentary',
    'loud_short_term',
    'true_peak_over',
    'reconstructed_over',
    'clipping',
    'silence',
    'dropout',
    'dead_channel',
    'duplicate_channel',
    'inverted_channel',
    'phase_problem',
  ]);
  for (const kind of Object.keys(doc.eventCounts)) expect(checked.has(kind), `event kind ${kind}`).toBe(true);
}
