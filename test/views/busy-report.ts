// A generated version-2 report of a 10-minute stereo programme with hundreds of flags (clip runs,
// true-peak overs, dropouts, loud passages, a gap, a DC offset), each channel's summary and
// per-channel loudness: for the plot's lanes, the page's grouped flag table and the phone and
// print layouts. Invented data; the analysis part is the little the pages read.
import type { ChannelSummary } from '../../src/engine/document.ts';
import type { Flag, FlagKind, FlagSeverity, QcReport } from '../../src/profiles/report.ts';
import { seededRandom } from '../../src/selftest/signals.ts';
import { sampleReport } from './sample-report.ts';

const SAMPLE_RATE = 48000;
export const BUSY_SECONDS = 600;

const tc = (seconds: number) => {
  const frames = Math.floor(seconds * 25);
  const pad = (n: number) => String(n).padStart(2, '0');
  return `${pad(Math.floor(frames / 90000))}:${pad(Math.floor(frames / 1500) % 60)}:${pad(Math.floor(frames / 25) % 60)}:${pad(frames % 25)}`;
};

interface KindSpec {
  kind: FlagKind;
  title: string;
  severity: FlagSeverity;
  ruleId: string | null;
  flags: number;
  seconds: number;
  unit: string | null;
  worst: (random: () => number) => number | null;
}

/** How many flags of each kind: 483 in all, under the report's cap of 500. */
export const BUSY_KINDS: KindSpec[] = [
  {
    kind: 'clipping',
    title: 'Clipping run',
    severity: 'fail',
    ruleId: 'no-clips',
    flags: 260,
    seconds: 0.002,
    unit: 'dBFS',
    worst: (r) => -0.05 * r(),
  },
  {
    kind: 'true_peak_over',
    title: 'True-peak over',
    severity: 'warn',
    ruleId: 'true-peak',
    flags: 140,
    seconds: 0.01,
    unit: 'dBTP',
    worst: (r) => -0.9 + 1.5 * r(),
  },
  {
    kind: 'dropout',
    title: 'Dropout',
    severity: 'remark',
    ruleId: null,
    flags: 60,
    seconds: 0.005,
    unit: 'dBFS',
    // Half of them digital zero: no level at all.
    worst: (r) => (r() < 0.5 ? null : -80 + 10 * r()),
  },
  {
    kind: 'loud_momentary',
    title: 'Momentary loudness over',
    severity: 'warn',
    ruleId: 'momentary-max',
    flags: 20,
    seconds: 2,
    unit: 'LUFS',
    worst: (r) => -9 + 2 * r(),
  },
  {
    kind: 'silence_gap',
    title: 'Gap in programme',
    severity: 'fail',
    ruleId: 'gap',
    flags: 2,
    seconds: 4,
    unit: 'dBFS',
    worst: () => null,
  },
  {
    kind: 'dc_offset',
    title: 'DC offset',
    severity: 'remark',
    ruleId: null,
    flags: 1,
    seconds: BUSY_SECONDS,
    unit: 'dBFS',
    worst: () => -41.2,
  },
];

export const BUSY_FLAG_COUNT = BUSY_KINDS.reduce((n, k) => n + k.flags, 0);

function busyFlags(): Flag[] {
  const random = seededRandom(19);
  const drafts: Omit<Flag, 'number' | 'message'>[] = [];
  for (const spec of BUSY_KINDS) {
    for (let i = 0; i < spec.flags; i++) {
      const start =
        spec.seconds >= BUSY_SECONDS ? 0 : Math.floor(random() * (BUSY_SECONDS - spec.seconds) * 1000) / 1000;
      const end = Math.min(BUSY_SECONDS, start + spec.seconds);
      const channel = spec.kind === 'clipping' || spec.kind === 'dropout' || spec.kind === 'dc_offset' ? i % 2 : null;
      const worstValue = spec.worst(random);
      const count = spec.kind === 'clipping' ? 1 + Math.floor(random() * 4) : 1;
      drafts.push({
        kind: spec.kind,
        title: spec.title,
        ruleId: spec.ruleId,
        severity: spec.severity,
        channel,
        channelName: channel === null ? 'all' : channel === 0 ? '1 L' : '2 R',
        startSample: Math.round(start * SAMPLE_RATE),
        endSample: Math.round(end * SAMPLE_RATE),
        startSeconds: start,
        endSeconds: end,
        startTimecode: tc(start),
        endTimecode: tc(end),
        worstValue,
        unit: worstValue === null ? null : spec.unit,
        count,
        detections: count * 12,
      });
    }
  }
  drafts.sort((a, b) => a.startSample - b.startSample || (a.channel ?? -1) - (b.channel ?? -1));
  return drafts.map((d, i) => ({
    number: i + 1,
    ...d,
    message: `${d.title}, ${d.channelName}, at ${d.startTimecode}`,
  }));
}

export const BUSY_CHANNELS: ChannelSummary[] = [
  {
    index: 0,
    label: 'L',
    samplePeakDbfs: -0.01,
    truePeakDbtp: 0.62,
    reconstructedPeakDbtp: 0.71,
    rmsDbfs: -17.84,
    rmsAes17Db: -14.83,
    dcOffset: 0.0087,
    dcOffsetDbfs: -41.2,
    crestFactorDb: 17.8,
    maxFastDbfs: -6.1,
    maxSlowDbfs: -8.4,
    maxVuDbfs: -9.2,
    clippingRuns: 130,
    clippedSamples: 4212,
    dropouts: 30,
    droppedSeconds: 0.15,
    silentSeconds: 8,
    dead: false,
  },
  {
    index: 1,
    label: 'R',
    samplePeakDbfs: -0.02,
    truePeakDbtp: 0.48,
    reconstructedPeakDbtp: 0.55,
    rmsDbfs: -18.31,
    rmsAes17Db: -15.3,
    dcOffset: -0.0001,
    dcOffsetDbfs: -80,
    crestFactorDb: 18.3,
    maxFastDbfs: -6.4,
    maxSlowDbfs: -8.8,
    maxVuDbfs: -9.5,
    clippingRuns: 130,
    clippedSamples: 3980,
    dropouts: 30,
    droppedSeconds: 0.15,
    silentSeconds: 8,
    dead: false,
  },
];

/** A channel of digital silence: every level null. */
export const SILENT_CHANNEL: ChannelSummary = {
  ...BUSY_CHANNELS[1],
  index: 2,
  label: 'C',
  samplePeakDbfs: null,
  truePeakDbtp: null,
  reconstructedPeakDbtp: null,
  rmsDbfs: null,
  rmsAes17Db: null,
  dcOffset: 0,
  dcOffsetDbfs: null,
  crestFactorDb: null,
  maxFastDbfs: null,
  maxSlowDbfs: null,
  maxVuDbfs: null,
  clippingRuns: 0,
  clippedSamples: 0,
  dropouts: 0,
  droppedSeconds: 0,
  silentSeconds: BUSY_SECONDS,
  dead: true,
};

export function busyReport(): QcReport {
  const base = sampleReport();
  const random = seededRandom(7);
  const flags = busyFlags();
  const counts = { fail: 0, warn: 0, remark: 0 };
  for (const f of flags) counts[f.severity]++;
  return {
    ...base,
    verdict: 'fail',
    headline: `FAIL: ${counts.fail} clip runs and gaps in a 10-minute programme`,
    integrity: { intact: true, severity: 'fail', problems: [] },
    file: { name: 'night-market-episode-12-final-mix-v3.wav', sizeBytes: 345_600_044 },
    format: {
      ...base.format,
      frames: BUSY_SECONDS * SAMPLE_RATE,
      framesDecoded: BUSY_SECONDS * SAMPLE_RATE,
      durationSeconds: BUSY_SECONDS,
    },
    channels: BUSY_CHANNELS,
    downmix: { measured: true, loRo: null, mono: null, channelIntegratedLufs: [-19.6, -20.1], note: null },
    series: {
      momentary: {
        pointsPerSecond: 10,
        firstAtSeconds: 0.1,
        lufs: Array.from({ length: BUSY_SECONDS * 10 }, (_, i) =>
          i < 3 ? null : -16 + 4 * Math.sin(i / 40) + 2 * random(),
        ),
      },
      shortTerm: {
        pointsPerSecond: 1,
        firstAtSeconds: 1,
        lufs: Array.from({ length: BUSY_SECONDS }, (_, i) => (i < 2 ? null : -16 + 3 * Math.sin(i / 4))),
      },
      speech: null,
    },
    flags,
    flagsTotal: flags.length,
    flagsTruncated: false,
    flagCounts: counts,
  };
}
