// Re-delivery comparison: two reports of the same programme ("fail, fix, resend") in, what changed
// out: readings with deltas, each rule's outcome before and after, flags resolved, new and
// persisting, and the verdict. Pure, so the CLI, the API and the page show the same thing.
//
// Flags match by kind, channel (and other channel) and time: the same kind on the same channel
// whose spans overlap once each is widened by FLAG_MATCH_TOLERANCE_SECONDS. The two files are
// assumed to start at the same point of the programme: an offset (a re-delivery with a longer
// head) is not searched for, so its flags read as resolved and new.

import type { CheckOutcome, CheckResult, Flag, FlagKind, FlagSeverity, QcReport, Verdict } from './report.ts';
import type { RuleType, Severity } from './types.ts';

/** How far apart two flags of one kind and channel may lie and still be the same finding. */
export const FLAG_MATCH_TOLERANCE_SECONDS = 0.5;
/** Durations further apart than this share of the longer one (and 1 s) mean different programmes. */
export const PROGRAMME_DURATION_SHARE = 0.05;
export const PROGRAMME_DURATION_MIN_SECONDS = 1;

export type ComparisonWarningCode =
  | 'different_profile'
  | 'different_profile_version'
  | 'different_programme'
  | 'same_file'
  | 'flags_truncated';

export interface ComparisonWarning {
  code: ComparisonWarningCode;
  message: string;
}

export interface ComparedSide {
  fileName: string | null;
  sha256: string | null;
  profile: { id: string; version: string };
  verdict: Verdict;
  headline: string;
  generatedAt: string;
}

export interface ReadingChange {
  key: string;
  label: string;
  /** Unit of `before` and `after`. */
  unit: string;
  /** Unit of `delta` (LU for a loudness difference, dB for a level difference). */
  deltaUnit: string;
  /** Decimals the value is shown with; `changed` is judged at that precision. */
  decimals: number;
  before: number | null;
  after: number | null;
  /** after - before; null when either side has no value. */
  delta: number | null;
  changed: boolean;
}

export interface TextChange {
  key: string;
  label: string;
  before: string | null;
  after: string | null;
  changed: boolean;
}

export interface CheckSide {
  outcome: CheckOutcome;
  passed: boolean;
  severity: Severity;
  measured: number | string | Array<number | string> | null;
  unit: string | null;
  explanation: string;
}

/** fixed: broken then met; broken: met then broken; added/removed: the rule is in one report only. */
export type CheckChangeKind = 'fixed' | 'broken' | 'still_broken' | 'still_met' | 'added' | 'removed';

export interface CheckChange {
  ruleId: string;
  type: RuleType;
  change: CheckChangeKind;
  before: CheckSide | null;
  after: CheckSide | null;
}

export interface ComparedFlag {
  number: number;
  kind: FlagKind;
  title: string;
  severity: FlagSeverity;
  channel: number | null;
  channelName: string;
  otherChannelName: string | null;
  startSeconds: number;
  endSeconds: number;
  startTimecode: string;
  endTimecode: string;
  worstValue: number | null;
  unit: string | null;
  count: number;
}

export interface FlagComparison {
  toleranceSeconds: number;
  resolved: ComparedFlag[];
  new: ComparedFlag[];
  persisting: Array<{ before: ComparedFlag; after: ComparedFlag }>;
}

export type VerdictChange = 'better' | 'worse' | 'same';

export interface Comparison {
  before: ComparedSide;
  after: ComparedSide;
  verdict: { before: Verdict; after: Verdict; change: VerdictChange };
  warnings: ComparisonWarning[];
  readings: ReadingChange[];
  format: TextChange[];
  checks: CheckChange[];
  flags: FlagComparison;
}

interface ReadingSpec {
  key: string;
  label: string;
  unit: string;
  deltaUnit: string;
  decimals: number;
  read(report: QcReport): number | null;
}

const loudness = (key: string, label: string, read: ReadingSpec['read']): ReadingSpec => ({
  key,
  label,
  unit: 'LUFS',
  deltaUnit: 'LU',
  decimals: 1,
  read,
});
const level = (key: string, label: string, unit: string, read: ReadingSpec['read']): ReadingSpec => ({
  key,
  label,
  unit,
  deltaUnit: 'dB',
  decimals: 1,
  read,
});
const amount = (key: string, label: string, unit: string, decimals: number, read: ReadingSpec['read']) => ({
  key,
  label,
  unit,
  deltaUnit: unit,
  decimals,
  read,
});

/** The readings compared, in the order shown. */
const READINGS: ReadingSpec[] = [
  loudness('integratedLufs', 'Integrated loudness', (r) => r.summary.integratedLufs),
  amount('loudnessRangeLu', 'Loudness range', 'LU', 1, (r) => r.summary.loudnessRangeLu),
  loudness('maxMomentaryLufs', 'Max momentary', (r) => r.summary.maxMomentaryLufs),
  loudness('maxShortTermLufs', 'Max short-term', (r) => r.summary.maxShortTermLufs),
  level('truePeakDbtp', 'True peak', 'dBTP', (r) => r.summary.truePeakDbtp),
  level('reconstructedPeakDbtp', 'Reconstructed peak', 'dBTP', (r) => r.summary.reconstructedPeakDbtp),
  level('samplePeakDbfs', 'Sample peak', 'dBFS', (r) => r.summary.samplePeakDbfs),
  level('rmsDbfs', 'RMS', 'dBFS', (r) => r.summary.rmsDbfs),
  amount('durationSeconds', 'Duration', 's', 3, (r) => r.format.durationSeconds ?? null),
  amount('sampleRate', 'Sample rate', 'Hz', 0, (r) => r.format.sampleRate),
  amount('bitsPerSample', 'Bit depth', 'bit', 0, (r) => r.format.bitsPerSample ?? null),
  amount('channels', 'Channels', 'ch', 0, (r) => r.format.channels),
  amount('clippingRuns', 'Clipping runs', 'runs', 0, (r) => r.summary.clippingRuns),
  amount('clippedSamples', 'Clipped samples', 'samples', 0, (r) => r.summary.clippedSamples),
  amount('truePeakOvers', 'True-peak overs', 'overs', 0, (r) => r.summary.truePeakOvers),
  amount('dropouts', 'Dropouts', 'dropouts', 0, (r) => r.summary.dropouts),
  amount('headSilenceSeconds', 'Head silence', 's', 2, (r) => r.summary.headSilenceSeconds),
  amount('tailSilenceSeconds', 'Tail silence', 's', 2, (r) => r.summary.tailSilenceSeconds),
  amount('longestInternalGapSeconds', 'Longest gap', 's', 2, (r) => r.summary.longestInternalGapSeconds),
];

function readingChange(spec: ReadingSpec, before: QcReport, after: QcReport): ReadingChange {
  const a = spec.read(before);
  const b = spec.read(after);
  const delta = a === null || b === null ? null : b - a;
  // Changed as shown: a difference below half the last shown digit reads as none.
  const changed = delta === null ? a !== b : Math.abs(delta) >= 0.5 * 10 ** -spec.decimals;
  const { read: _read, ...shown } = spec;
  return { ...shown, before: a, after: b, delta, changed };
}

function formatChanges(before: QcReport, after: QcReport): TextChange[] {
  const texts: Array<[string, string, (r: QcReport) => string | null]> = [
    ['container', 'Container', (r) => r.format.container],
    ['encoding', 'Encoding', (r) => r.format.encoding],
    ['channelLayout', 'Channel layout', (r) => r.format.channelLabels.join(' ')],
  ];
  return texts.map(([key, label, read]) => {
    const a = read(before);
    const b = read(after);
    return { key, label, before: a, after: b, changed: a !== b };
  });
}

function checkSide(c: CheckResult): CheckSide {
  return {
    outcome: c.outcome,
    passed: c.passed,
    severity: c.severity,
    measured: c.measured,
    unit: c.unit,
    explanation: c.explanation,
  };
}

function checkChanges(before: QcReport, after: QcReport): CheckChange[] {
  const byId = new Map(after.checks.map((c) => [c.ruleId, c]));
  const seen = new Set<string>();
  const out: CheckChange[] = [];
  for (const a of before.checks) {
    const b = byId.get(a.ruleId);
    seen.add(a.ruleId);
    if (!b) {
      out.push({ ruleId: a.ruleId, type: a.type, change: 'removed', before: checkSide(a), after: null });
      continue;
    }
    const change: CheckChangeKind = a.passed
      ? b.passed
        ? 'still_met'
        : 'broken'
      : b.passed
        ? 'fixed'
        : 'still_broken';
    out.push({ ruleId: a.ruleId, type: b.type, change, before: checkSide(a), after: checkSide(b) });
  }
  for (const b of after.checks)
    if (!seen.has(b.ruleId))
      out.push({ ruleId: b.ruleId, type: b.type, change: 'added', before: null, after: checkSide(b) });
  return out;
}

function comparedFlag(f: Flag): ComparedFlag {
  return {
    number: f.number,
    kind: f.kind,
    title: f.title,
    severity: f.severity,
    channel: f.channel,
    channelName: f.channelName,
    otherChannelName: f.otherChannelName ?? null,
    startSeconds: f.startSeconds,
    endSeconds: f.endSeconds,
    startTimecode: f.startTimecode,
    endTimecode: f.endTimecode,
    worstValue: f.worstValue,
    unit: f.unit,
    count: f.count,
  };
}

/** Seconds between two spans: 0 when they overlap. */
function gapSeconds(a: Flag, b: Flag): number {
  return Math.max(0, a.startSeconds - b.endSeconds, b.startSeconds - a.endSeconds);
}

const sameFinding = (a: Flag, b: Flag, toleranceSeconds: number) =>
  a.kind === b.kind &&
  a.channel === b.channel &&
  (a.otherChannel ?? null) === (b.otherChannel ?? null) &&
  gapSeconds(a, b) <= toleranceSeconds;

/**
 * One to one, greedily in the old report's order: each old flag takes the nearest unmatched new
 * flag of the same finding (ties: the earlier). Flags are capped per report (DEFAULT_MAX_FLAGS),
 * so the quadratic search stays small.
 */
export function matchFlags(before: Flag[], after: Flag[], toleranceSeconds = FLAG_MATCH_TOLERANCE_SECONDS) {
  const taken = new Uint8Array(after.length);
  const resolved: ComparedFlag[] = [];
  const persisting: FlagComparison['persisting'] = [];
  for (const a of before) {
    let best = -1;
    let bestDistance = Infinity;
    for (let i = 0; i < after.length; i++) {
      if (taken[i] || !sameFinding(a, after[i], toleranceSeconds)) continue;
      const distance = Math.abs(after[i].startSeconds - a.startSeconds);
      if (distance < bestDistance) {
        best = i;
        bestDistance = distance;
      }
    }
    if (best < 0) resolved.push(comparedFlag(a));
    else {
      taken[best] = 1;
      persisting.push({ before: comparedFlag(a), after: comparedFlag(after[best]) });
    }
  }
  const fresh = after.filter((_, i) => !taken[i]).map(comparedFlag);
  return { toleranceSeconds, resolved, new: fresh, persisting };
}

const RANK: Record<Verdict, number> = { pass: 0, warn: 1, fail: 2 };

function side(r: QcReport): ComparedSide {
  return {
    fileName: r.file?.name ?? null,
    sha256: r.file?.sha256 ?? null,
    profile: { id: r.profile.id, version: r.profile.version },
    verdict: r.verdict,
    headline: r.headline,
    generatedAt: r.generatedAt,
  };
}

function warningsOf(before: QcReport, after: QcReport): ComparisonWarning[] {
  const out: ComparisonWarning[] = [];
  const p = before.profile;
  const q = after.profile;
  if (p.id !== q.id)
    out.push({
      code: 'different_profile',
      message: `checked against different profiles (${p.id} ${p.version}, then ${q.id} ${q.version}): rule outcomes may not be comparable`,
    });
  else if (p.version !== q.version)
    out.push({
      code: 'different_profile_version',
      message: `checked against different versions of profile ${p.id} (${p.version}, then ${q.version}): a rule may have changed`,
    });
  const d0 = before.format.durationSeconds ?? null;
  const d1 = after.format.durationSeconds ?? null;
  if (d0 !== null && d1 !== null) {
    const apart = Math.abs(d1 - d0);
    if (apart > PROGRAMME_DURATION_MIN_SECONDS && apart > PROGRAMME_DURATION_SHARE * Math.max(d0, d1))
      out.push({
        code: 'different_programme',
        message: `durations differ by ${apart.toFixed(3)} s (${d0.toFixed(3)} s, then ${d1.toFixed(3)} s): these may be different programmes`,
      });
  }
  const h0 = before.file?.sha256;
  if (h0 && h0 === after.file?.sha256)
    out.push({
      code: 'same_file',
      message: 'both reports are of the same file (equal SHA-256): nothing was re-delivered',
    });
  for (const [name, r] of [
    ['old', before],
    ['new', after],
  ] as const)
    if (r.flagsTruncated)
      out.push({
        code: 'flags_truncated',
        message: `the ${name} report lists ${r.flags.length} of its ${r.flagsTotal} flags (the rest are past its caps): only listed flags are matched`,
      });
    else if ((r.unlistedEvents ?? []).length > 0)
      out.push({
        code: 'flags_truncated',
        message: `the ${name} report's analysis kept only its first events (the rest are counted, not listed): only listed flags are matched`,
      });
  return out;
}

export function compareReports(before: QcReport, after: QcReport): Comparison {
  const change: VerdictChange =
    RANK[after.verdict] < RANK[before.verdict]
      ? 'better'
      : RANK[after.verdict] > RANK[before.verdict]
        ? 'worse'
        : 'same';
  return {
    before: side(before),
    after: side(after),
    verdict: { before: before.verdict, after: after.verdict, change },
    warnings: warningsOf(before, after),
    readings: READINGS.map((spec) => readingChange(spec, before, after)),
    format: formatChanges(before, after),
    checks: checkChanges(before, after),
    flags: matchFlags(before.flags, after.flags),
  };
}
