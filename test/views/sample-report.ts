// A hand-made version-2 report for the page and plot tests: a 20 s stereo file cut short at
// 5 s (an integrity failure), one fail, one warn and two remarks (one merging 37 events), and a
// marginal check. The report-only fields are typed strictly; the analysis part is the little the
// pages read.
import type { AnalysisDocument } from '../../src/engine/document.ts';
import type { Flag, QcReport } from '../../src/profiles/report.ts';

type ReportOwn = Omit<QcReport, keyof AnalysisDocument> & { integrity: QcReport['integrity'] };

const SAMPLE_RATE = 48000;
const tc = (seconds: number) => {
  const frames = Math.round(seconds * 25);
  const pad = (n: number) => String(n).padStart(2, '0');
  return `${pad(Math.floor(frames / 90000))}:${pad(Math.floor(frames / 1500) % 60)}:${pad(Math.floor(frames / 25) % 60)}:${pad(frames % 25)}`;
};

function flag(
  number: number,
  fields: Pick<
    Flag,
    'kind' | 'title' | 'severity' | 'ruleId' | 'channel' | 'channelName' | 'worstValue' | 'unit' | 'count' | 'message'
  > & { startSeconds: number; endSeconds: number; otherChannel?: number; otherChannelName?: string },
): Flag {
  return {
    number,
    ...fields,
    startSample: Math.round(fields.startSeconds * SAMPLE_RATE),
    endSample: Math.round(fields.endSeconds * SAMPLE_RATE),
    startTimecode: tc(fields.startSeconds),
    endTimecode: tc(fields.endSeconds),
    detections: fields.count,
  };
}

export const sampleFlags: Flag[] = [
  flag(1, {
    kind: 'data_ends_early',
    title: 'Audio ends early',
    severity: 'fail',
    ruleId: null,
    channel: null,
    channelName: 'all',
    startSeconds: 5,
    endSeconds: 5,
    worstValue: null,
    unit: null,
    count: 1,
    message: 'Audio ends at 00:00:05:00; the file declares 00:00:20:00 (15 s missing).',
  }),
  flag(2, {
    kind: 'true_peak_over',
    title: 'True peak over the ceiling',
    severity: 'warn',
    ruleId: 'true-peak',
    channel: 0,
    channelName: '1 L',
    startSeconds: 1.2,
    endSeconds: 1.5,
    worstValue: -0.42,
    unit: 'dBTP',
    count: 3,
    message: 'True peak -0.4 dBTP over the -1.0 dBTP ceiling, 3 overs.',
  }),
  flag(3, {
    kind: 'dc_offset',
    title: 'DC offset',
    severity: 'remark',
    ruleId: null,
    channel: 1,
    channelName: '2 R',
    startSeconds: 0,
    endSeconds: 5,
    worstValue: -38.1,
    unit: 'dBFS',
    count: 1,
    message: 'Channel 2 R has a DC offset of -38.1 dBFS.',
  }),
  flag(4, {
    kind: 'dropout',
    title: 'Dropout',
    severity: 'remark',
    ruleId: null,
    channel: 1,
    channelName: '2 R',
    startSeconds: 3,
    endSeconds: 4.2,
    worstValue: null,
    unit: null,
    count: 37,
    message: '37 very short dropouts on channel 2 R.',
  }),
];

export const sampleReportOwn: ReportOwn = {
  reportVersion: 2,
  verdict: 'fail',
  headline: 'Damaged: audio ends at 00:00:05:00 of 00:00:20:00',
  integrity: {
    intact: false,
    severity: 'fail',
    problems: [
      {
        code: 'data_ends_early',
        atSample: 5 * SAMPLE_RATE,
        atSeconds: 5,
        atTimecode: '00:00:05:00',
        message: 'audio ends at 5.000 s but the file declares 20.000 s (720000 frames missing)',
      },
    ],
  },
  profile: { id: 'podcast', version: '1', name: 'Podcast', basis: 'house rule' },
  checks: [
    {
      ruleId: 'integrated',
      type: 'integrated-loudness',
      severity: 'fail',
      source: null,
      measured: -23.4,
      unit: 'LUFS',
      limit: { targetLufs: -23, toleranceLu: 1 },
      outcome: 'pass',
      passed: true,
      explanation: 'Integrated -23.4 LUFS, target -23 ± 1 LU',
    },
    {
      ruleId: 'true-peak',
      type: 'true-peak',
      severity: 'warn',
      source: null,
      measured: -0.42,
      unit: 'dBTP',
      limit: { max: -1 },
      outcome: 'marginal',
      passed: false,
      explanation: 'True peak -0.4 dBTP, ceiling -1.0 dBTP (within the measurement tolerance)',
    },
  ],
  flags: sampleFlags,
  flagsTotal: sampleFlags.length,
  flagsTruncated: false,
  flagCounts: { fail: 1, warn: 1, remark: 2 },
  correction: null,
  timecode: { frameRate: '25', dropFrame: false, originSeconds: 0, originTimecode: '00:00:00:00' },
  headTimecode: {
    toneStart: '00:00:00:00',
    toneEnd: '00:00:01:00',
    headPop: '00:00:02:00',
    programmeStart: '00:00:04:00',
    programmeEnd: null,
    tailPop: null,
  },
  generatedAt: '2025-01-01T00:00:00.000Z',
};

export function sampleReport(): QcReport {
  const momentary = Array.from({ length: 50 }, (_, i) => (i < 4 ? null : -23 + 2 * Math.sin(i / 5)));
  const shortTerm = Array.from({ length: 5 }, (_, i) => (i < 3 ? null : -23));
  const analysis = {
    schemaVersion: 1,
    engine: { name: 'earmark', version: '0.1.0' },
    file: { name: 'harbour-promo-cut.wav', sizeBytes: 960_044 },
    format: {
      container: 'wav',
      encoding: 'pcm_s16le',
      sampleRate: SAMPLE_RATE,
      channels: 2,
      bitsPerSample: 16,
      frames: 20 * SAMPLE_RATE,
      durationSeconds: 20,
      channelLabels: ['L', 'R'],
      channelMask: null,
      timeReferenceSamples: null,
      framesDecoded: 5 * SAMPLE_RATE,
      timeReferenceSeconds: null,
    },
    summary: {
      integratedLufs: -23.4,
      loudnessRangeLu: 2.1,
      maxMomentaryLufs: -21,
      maxMomentaryAtSeconds: 2,
      maxShortTermLufs: -23,
      maxShortTermAtSeconds: 4,
      truePeakDbtp: -0.42,
      truePeakAtSeconds: 1.3,
      samplePeakDbfs: -0.6,
      rmsDbfs: -26,
      rmsAes17Db: -23,
      headSilenceSeconds: 0,
      tailSilenceSeconds: 0,
      longestInternalGapSeconds: 0,
      allSilent: false,
      clippingRuns: 0,
      clippedSamples: 0,
      truePeakOvers: 3,
      deadChannels: [],
    },
    head: {
      thresholdDbfs: -60,
      minToneSeconds: 0.4,
      maxPopSeconds: 0.1,
      toneSegments: [0, 1].map((channel) => ({
        channel,
        startFrame: 0,
        endFrame: SAMPLE_RATE,
        startSeconds: 0,
        endSeconds: 1,
        frequencyHz: 1000,
        peakDbfs: -18,
        rmsDbfs: -21.01,
        rmsAes17Db: -18,
        intoProgramme: false,
      })),
      toneSegmentsTotal: 2,
      programmeStartFrame: 4 * SAMPLE_RATE,
      programmeStartSeconds: 4,
      toneGapSeconds: 3,
      toneIntoProgramme: false,
      headPop: {
        startFrame: 2 * SAMPLE_RATE,
        endFrame: 2 * SAMPLE_RATE + 1920,
        startSeconds: 2,
        endSeconds: 2.04,
        frequencyHz: 1000,
        peakDbfs: -18,
        rmsDbfs: -21.01,
        channels: [0, 1],
      },
      headPops: 1,
      tailPop: null,
      programmeEndFrame: null,
      programmeEndSeconds: null,
    },
    series: {
      momentary: { pointsPerSecond: 10, firstAtSeconds: 0.4, lufs: momentary },
      shortTerm: { pointsPerSecond: 1, firstAtSeconds: 3, lufs: shortTerm },
    },
  } as unknown as AnalysisDocument;
  return { ...analysis, ...sampleReportOwn };
}
