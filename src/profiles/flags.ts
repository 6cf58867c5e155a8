// Every finding of the analysis becomes a time-located flag. A finding that breaks a broken rule
// carries that rule's severity; any other finding is a remark: shown, never counted in the
// verdict. Nearby flags of one kind, rule, severity and channel merge (a burst of clip runs is one
// flag with its count, end and worst value); the list is capped, fail flags kept first.

import type { AnalysisEvent, EventKind } from '../analysis/events.ts';
import { channelName, type AnalysisDocument } from '../engine/document.ts';
import { declaredLoudnessDrafts } from './declared-flags.ts';
import { fmt } from './format.ts';
import type { CheckResult, Flag, FlagKind, FlagSeverity, UnlistedEvents } from './report.ts';
import { RULES, RULE_TYPES, ruleSpec } from './rules/index.ts';
import { headDrafts } from './head-flags.ts';
import { headSilenceOf } from './head.ts';
import { timecodeAtSample, type FrameRate } from './timecode.ts';
import type { Profile, Rule, RuleType } from './types.ts';

export const DEFAULT_FLAG_MERGE_SECONDS = 0.5;
export const DEFAULT_MAX_FLAGS = 500;
/** A DC offset at or above this is shown as a remark when no rule judges it (common practice, our default). */
export const REMARK_DC_OFFSET_DBFS = -60;

export interface FlagOptions {
  /** Flags of one kind closer than this merge. */
  mergeGapSeconds?: number;
  maxFlags?: number;
}

/** Words and unit of each kind, as printed everywhere. */
export const FLAG_KINDS: Record<FlagKind, { title: string; unit: string | null }> = {
  data_ends_early: { title: 'Audio ends early', unit: null },
  unreadable_data: { title: 'Unreadable data', unit: null },
  non_finite_samples: { title: 'Non-finite samples', unit: null },
  no_audio: { title: 'No audio', unit: null },
  too_short: { title: 'Too short to measure', unit: null },
  clipping: { title: 'Clipping run', unit: 'dBFS' },
  dropout: { title: 'Dropout', unit: 'dBFS' },
  silence_gap: { title: 'Gap in programme', unit: 'dBFS' },
  silence: { title: 'Silence', unit: 'dBFS' },
  head_silence: { title: 'Silence at head', unit: 'dBFS' },
  tail_silence: { title: 'Silence at tail', unit: 'dBFS' },
  true_peak_over: { title: 'True-peak over', unit: 'dBTP' },
  loud_short_term: { title: 'Short-term loudness over', unit: 'LUFS' },
  loud_momentary: { title: 'Momentary loudness over', unit: 'LUFS' },
  phase_problem: { title: 'Anti-phase passage', unit: 'correlation' },
  dead_channel: { title: 'Dead channel', unit: null },
  duplicate_channel: { title: 'Duplicate channel', unit: 'correlation' },
  inverted_channel: { title: 'Inverted channel', unit: 'correlation' },
  dc_offset: { title: 'DC offset', unit: 'dBFS' },
  line_up_tone: { title: 'Line-up tone', unit: 'dBFS' },
  tone_into_programme: { title: 'Tone into programme', unit: null },
  sync_pop: { title: 'Sync pop', unit: 'dBFS' },
  sync_pop_missing: { title: 'Sync pop missing', unit: null },
  declared_loudness_mismatch: { title: 'Declared loudness differs', unit: null },
  downmix_clipping: { title: 'Downmix clipping', unit: 'dBFS' },
};

export type FlagDraft = Draft;
type Draft = Pick<
  Flag,
  | 'kind'
  | 'ruleId'
  | 'severity'
  | 'channel'
  | 'otherChannel'
  | 'startSample'
  | 'endSample'
  | 'worstValue'
  | 'count'
  | 'detections'
> & {
  message?: string /** When the kind's unit does not fit this finding (declared loudness: LU or dB). */;
  unit?: string;
};

/** The flag kind each engine event becomes. */
const EVENT_FLAGS: Record<EventKind, FlagKind> = {
  clipping: 'clipping',
  dropout: 'dropout',
  silence: 'silence',
  true_peak_over: 'true_peak_over',
  reconstructed_over: 'true_peak_over',
  loud_short_term: 'loud_short_term',
  loud_momentary: 'loud_momentary',
  phase_problem: 'phase_problem',
  dead_channel: 'dead_channel',
  duplicate_channel: 'duplicate_channel',
  inverted_channel: 'inverted_channel',
  downmix_clipping: 'downmix_clipping',
};

/** The rule type that judges each event kind, from the rule registry's `events`. */
const JUDGED_BY = new Map<EventKind, RuleType>();
for (const type of RULE_TYPES) {
  for (const kind of RULES[type].events ?? []) {
    const other = JUDGED_BY.get(kind);
    if (other !== undefined) throw new Error(`event ${kind} is judged by both ${other} and ${type} rules`);
    JUDGED_BY.set(kind, type);
  }
}

/** Does this finding break this rule? Threshold kinds compare the finding's own value. */
function breaks(rule: Rule, e: AnalysisEvent, doc: AnalysisDocument): boolean {
  return ruleSpec(rule).breaks?.(rule, e, doc) ?? true;
}

/** The rule that judges a finding (null when none does) and the severity it gives. */
export type Judged = { ruleId: string | null; severity: FlagSeverity };

const rank = (s: FlagSeverity) => (s === 'fail' ? 0 : s === 'warn' ? 1 : 2);

/** The severity and rule of a finding: the strictest broken rule that it breaks, else a remark (naming a met rule that judges it, if any). */
function judge(rules: Rule[], checks: Map<string, CheckResult>, e: AnalysisEvent, doc: AnalysisDocument): Judged {
  let best: Judged = { ruleId: null, severity: 'remark' };
  for (const rule of rules) {
    if (!breaks(rule, e, doc)) continue;
    const check = checks.get(rule.id);
    const severity: FlagSeverity = check && !check.passed ? check.severity : 'remark';
    if (best.ruleId === null || rank(severity) < rank(best.severity)) best = { ruleId: rule.id, severity };
  }
  return best;
}

/** True-peak overs come from the reading the profile judges: one list, not two of the same overs. */
function judgedOverKind(profile: Profile): EventKind {
  return profile.rules.some((r) => r.type === 'true-peak' && r.reading === 'reconstructed')
    ? 'reconstructed_over'
    : 'true_peak_over';
}

function eventDrafts(profile: Profile, doc: AnalysisDocument, checks: Map<string, CheckResult>): Draft[] {
  const frames = doc.format.framesDecoded;
  const overKind = judgedOverKind(profile);
  const together = doc.events.filter((e) => e.kind === 'silence' && e.channel === null);
  // A channel's silence that is mostly the programme's own silence says nothing new.
  const repeatsAll = (e: AnalysisEvent) =>
    together.some(
      (a) =>
        Math.min(a.endFrame, e.endFrame) - Math.max(a.startFrame, e.startFrame) >= 0.9 * (e.endFrame - e.startFrame),
    );
  const drafts: Draft[] = [];
  for (const e of doc.events) {
    if ((e.kind === 'true_peak_over' || e.kind === 'reconstructed_over') && e.kind !== overKind) continue;
    if (e.kind === 'silence' && e.channel !== null && repeatsAll(e)) continue;
    let kind = EVENT_FLAGS[e.kind];
    const judgedBy = JUDGED_BY.get(e.kind);
    let rules = judgedBy ? profile.rules.filter((r) => r.type === judgedBy) : [];
    if (e.kind === 'silence' && e.channel === null) {
      // Head and tail silence come from the summary (edgeDrafts); the rest is a gap in the programme.
      if (e.startFrame === 0 || e.endFrame >= frames) continue;
      kind = 'silence_gap';
      rules = profile.rules.filter((r) => r.type === 'silence-gap');
    }
    const { ruleId, severity } = judge(rules, checks, e, doc);
    drafts.push({
      kind,
      ruleId,
      severity,
      channel: e.channel,
      ...(e.otherChannel !== undefined ? { otherChannel: e.otherChannel } : {}),
      startSample: e.startFrame,
      endSample: e.endFrame,
      worstValue: e.peakValue ?? null,
      count: 1,
      detections: e.count ?? 1,
    });
  }
  return drafts;
}

/** The severity a broken check of this type gives, with its rule id; a remark when none is broken. */
export function ruleVerdict(
  profile: Profile,
  checks: Map<string, CheckResult>,
  type: RuleType,
  applies: (r: Rule) => boolean = () => true,
): Judged {
  const rules = profile.rules.filter((r) => r.type === type && applies(r));
  const broken = rules
    .map((r) => checks.get(r.id))
    .filter((c): c is CheckResult => c !== undefined && !c.passed)
    .sort((a, b) => rank(a.severity) - rank(b.severity));
  if (broken.length > 0) return { ruleId: broken[0].ruleId, severity: broken[0].severity };
  return { ruleId: rules[0]?.id ?? null, severity: 'remark' };
}

/**
 * The loudest sample (dBFS) of the all-channel silence events inside a span: the worst value of a
 * head or tail silence. Null when they are digital silence, or when no event lies there.
 */
function loudestInSilence(doc: AnalysisDocument, startSample: number, endSample: number): number | null {
  let loudest: number | null = null;
  for (const e of doc.events) {
    if (e.kind !== 'silence' || e.channel !== null || e.peakValue === undefined) continue;
    if (e.endFrame <= startSample || e.startFrame >= endSample) continue;
    loudest = loudest === null ? e.peakValue : Math.max(loudest, e.peakValue);
  }
  return loudest;
}

function edgeDrafts(profile: Profile, doc: AnalysisDocument, checks: Map<string, CheckResult>): Draft[] {
  const frames = doc.format.framesDecoded;
  const rate = doc.format.sampleRate;
  const notable = doc.settings.silence.minDurationSeconds;
  const out: Draft[] = [];
  const edges = doc.summary.allSilent ? (['head-silence'] as const) : (['head-silence', 'tail-silence'] as const);
  for (const type of edges) {
    const head = type === 'head-silence';
    // The head counts back from the programme start when there is a line-up tone (head.ts).
    const lead = headSilenceOf(doc);
    const seconds = head ? lead.seconds : doc.summary.tailSilenceSeconds;
    const judged = ruleVerdict(profile, checks, type);
    if (seconds <= 0 || (judged.severity === 'remark' && seconds < notable)) continue;
    const length = Math.min(frames, Math.round(seconds * rate));
    const startSample = head ? lead.startSample : frames - length;
    const endSample = head ? lead.endSample : frames;
    out.push({
      kind: head ? 'head_silence' : 'tail_silence',
      ...judged,
      channel: null,
      startSample,
      endSample,
      worstValue: loudestInSilence(doc, startSample, endSample),
      count: 1,
      detections: 1,
    });
  }
  return out;
}

function dcDrafts(profile: Profile, doc: AnalysisDocument, checks: Map<string, CheckResult>): Draft[] {
  const out: Draft[] = [];
  for (const c of doc.channels) {
    if (c.dcOffsetDbfs === null) continue;
    const judged = ruleVerdict(
      profile,
      checks,
      'dc-offset',
      (r) => r.type === 'dc-offset' && (c.dcOffsetDbfs ?? -Infinity) > r.maxDbfs,
    );
    if (judged.severity === 'remark' && c.dcOffsetDbfs < REMARK_DC_OFFSET_DBFS) continue;
    out.push({
      kind: 'dc_offset',
      ...judged,
      channel: c.index,
      startSample: 0,
      endSample: doc.format.framesDecoded,
      worstValue: c.dcOffsetDbfs,
      count: 1,
      detections: 1,
    });
  }
  return out;
}

function integrityDrafts(doc: AnalysisDocument, integrity: CheckResult): Draft[] {
  return doc.integrity.problems.map((p) => ({
    kind: p.code,
    ruleId: integrity.ruleId,
    severity: integrity.passed ? 'remark' : integrity.severity,
    channel: null,
    // A point: where the audio stops, or the first bad sample (how far damage reaches is unknown).
    startSample: p.atSample,
    endSample: p.atSample,
    worstValue: null,
    count: 1,
    detections: 1,
    message: p.message,
  }));
}

function merge(drafts: Draft[], gapSamples: number): Draft[] {
  const key = (d: Draft) => `${d.kind}|${d.ruleId}|${d.severity}|${d.channel}|${d.otherChannel ?? ''}`;
  const sorted = [...drafts].sort((a, b) => key(a).localeCompare(key(b)) || a.startSample - b.startSample);
  const out: Draft[] = [];
  for (const d of sorted) {
    const last = out[out.length - 1];
    if (last && key(last) === key(d) && d.message === undefined && d.startSample - last.endSample <= gapSamples) {
      last.endSample = Math.max(last.endSample, d.endSample);
      last.count += d.count;
      last.detections += d.detections;
      if (d.worstValue !== null) {
        const lower = d.kind === 'phase_problem'; // correlation: the lowest is the worst
        last.worstValue =
          last.worstValue === null
            ? d.worstValue
            : lower
              ? Math.min(last.worstValue, d.worstValue)
              : Math.max(last.worstValue, d.worstValue);
      }
    } else out.push({ ...d });
  }
  return out;
}

/** A span's length as the report page's flag table writes it (assets/flag-table.js lengthText):
 * milliseconds under 0.1 s, so a 10-sample clip run reads "0.2 ms", not "0.000 s". */
export function lengthText(seconds: number): string {
  return seconds < 0.1 ? `${fmt(seconds * 1000, 1)} ms` : `${fmt(seconds, 3)} s`;
}

function messageOf(f: Omit<Flag, 'message' | 'number'>): string {
  const where =
    f.channel === null
      ? 'all channels'
      : `channel ${f.channelName}${f.otherChannelName ? ` and ${f.otherChannelName}` : ''}`;
  const span =
    f.endSample > f.startSample
      ? `${f.startTimecode} to ${f.endTimecode} (${lengthText(f.endSeconds - f.startSeconds)})`
      : `at ${f.startTimecode}`;
  const count = f.count > 1 ? `, ${f.count} merged` : '';
  const worst =
    f.worstValue !== null && f.unit ? `, worst ${fmt(f.worstValue, f.unit === 'correlation' ? 2 : 1)} ${f.unit}` : '';
  return `${f.title}, ${where}, ${span}${count}${worst}`;
}

export interface BuiltFlags {
  flags: Flag[];
  flagsTotal: number;
  flagCounts: Record<FlagSeverity, number>;
  unlistedEvents: UnlistedEvents[];
}

/**
 * Findings the analysis counted past its event cap (it keeps only counts of those, by kind): never
 * made flags, as nobody knows which listed flag each would merge into or how many flags they form.
 * The verdict does not need them: checks read the meters' own totals.
 */
function unlistedEvents(profile: Profile, doc: AnalysisDocument, checks: Map<string, CheckResult>): UnlistedEvents[] {
  const kept = new Map<EventKind, number>();
  for (const e of doc.events) kept.set(e.kind, (kept.get(e.kind) ?? 0) + 1);
  const overKind = judgedOverKind(profile);
  const out: UnlistedEvents[] = [];
  for (const [kind, total] of Object.entries(doc.eventCounts) as [EventKind, number][]) {
    const count = Math.max(0, total - (kept.get(kind) ?? 0));
    if (count === 0 || ((kind === 'true_peak_over' || kind === 'reconstructed_over') && kind !== overKind)) continue;
    // A programme silence may be a gap (its rule) or a channel's silence (a remark): named by the gap rule.
    const rule = kind === 'silence' ? 'silence-gap' : JUDGED_BY.get(kind);
    const judged = rule ? ruleVerdict(profile, checks, rule) : { ruleId: null, severity: 'remark' as const };
    out.push({ kind: EVENT_FLAGS[kind], ...judged, count });
  }
  return out;
}

export function buildFlags(
  profile: Profile,
  doc: AnalysisDocument,
  checks: CheckResult[],
  integrity: CheckResult,
  rate: FrameRate,
  options: FlagOptions = {},
): BuiltFlags {
  const byId = new Map(checks.map((c) => [c.ruleId, c]));
  const sampleRate = doc.format.sampleRate;
  const drafts = [
    ...integrityDrafts(doc, integrity),
    ...eventDrafts(profile, doc, byId),
    ...edgeDrafts(profile, doc, byId),
    ...dcDrafts(profile, doc, byId),
    ...headDrafts(profile, doc, byId, rate),
    ...declaredLoudnessDrafts(profile, doc, byId),
  ];
  const merged = merge(drafts, Math.round((options.mergeGapSeconds ?? DEFAULT_FLAG_MERGE_SECONDS) * sampleRate));
  const flagCounts: Record<FlagSeverity, number> = { fail: 0, warn: 0, remark: 0 };
  for (const d of merged) flagCounts[d.severity]++;
  const maxFlags = options.maxFlags ?? DEFAULT_MAX_FLAGS;
  const chosen = [...merged]
    .sort((a, b) => rank(a.severity) - rank(b.severity) || a.startSample - b.startSample)
    .slice(0, maxFlags)
    .sort(
      (a, b) =>
        a.startSample - b.startSample || (a.channel ?? -1) - (b.channel ?? -1) || rank(a.severity) - rank(b.severity),
    );
  const origin = doc.format.timeReferenceSamples;
  const flags = chosen.map((d, i): Flag => {
    const { message, unit, ...rest } = d;
    const base = {
      ...rest,
      title: FLAG_KINDS[d.kind].title,
      unit: d.worstValue === null ? null : (unit ?? FLAG_KINDS[d.kind].unit),
      channelName: channelName(doc, d.channel),
      ...(d.otherChannel !== undefined ? { otherChannelName: channelName(doc, d.otherChannel) } : {}),
      startSeconds: d.startSample / sampleRate,
      endSeconds: d.endSample / sampleRate,
      startTimecode: timecodeAtSample(d.startSample, sampleRate, rate, origin),
      endTimecode: timecodeAtSample(d.endSample, sampleRate, rate, origin),
    };
    return { number: i + 1, ...base, message: message ?? messageOf(base) };
  });
  return { flags, flagsTotal: merged.length, flagCounts, unlistedEvents: unlistedEvents(profile, doc, byId) };
}
