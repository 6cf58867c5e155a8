// Time-located flags from the engine's events, kept only for rules whose check failed, with
// the severity of the strictest such rule. Nearby flags of one kind, channel and rule merge
// (a burst of overs is one flag, counted); the list is capped, fail flags kept first.

import type { AnalysisEvent, EventKind } from '../analysis/events.ts';
import type { AnalysisDocument } from '../engine/document.ts';
import type { CheckResult, Flag, FlagKind } from './report.ts';
import { timecodeAtSample, type FrameRate } from './timecode.ts';
import type { Profile, Rule, RuleType } from './types.ts';

export const DEFAULT_FLAG_MERGE_SECONDS = 0.5;
export const DEFAULT_MAX_FLAGS = 500;

export interface FlagOptions {
  /** Flags of one kind closer than this merge. */
  mergeGapSeconds?: number;
  maxFlags?: number;
}

const EVENT_RULES: Partial<Record<EventKind, { kind: FlagKind; rule: RuleType }>> = {
  clipping: { kind: 'clipping', rule: 'clipping' },
  silence: { kind: 'silence_gap', rule: 'silence-gap' },
  true_peak_over: { kind: 'true_peak_over', rule: 'true-peak' },
  loud_short_term: { kind: 'loud_short_term', rule: 'short-term-max' },
  loud_momentary: { kind: 'loud_momentary', rule: 'momentary-max' },
  phase_problem: { kind: 'phase_problem', rule: 'phase' },
  dead_channel: { kind: 'dead_channel', rule: 'dead-channel' },
  duplicate_channel: { kind: 'duplicate_channel', rule: 'duplicate-channels' },
  inverted_channel: { kind: 'inverted_channel', rule: 'inverted-channels' },
};

/** Does this event break this (failed) rule? Threshold kinds compare the event's own value. */
function breaks(rule: Rule, e: AnalysisEvent): boolean {
  switch (rule.type) {
    case 'true-peak': return (e.peakValue ?? Infinity) > rule.maxDbtp;
    case 'short-term-max': case 'momentary-max': return (e.peakValue ?? Infinity) > rule.maxLufs;
    case 'silence-gap': return e.endSeconds - e.startSeconds > rule.maxSeconds;
    default: return true;
  }
}

type Draft = Omit<Flag, 'startTimecode' | 'endTimecode' | 'startSeconds' | 'endSeconds'>;

const severityRank = (r: Rule) => (r.severity === 'fail' ? 0 : 1);

function strictestBroken(rules: Rule[], e: AnalysisEvent): Rule | undefined {
  return rules.filter((r) => breaks(r, e)).sort((a, b) => severityRank(a) - severityRank(b))[0];
}

function draftsFromEvents(profile: Profile, doc: AnalysisDocument, failed: Set<string>): { drafts: Draft[]; unseen: number } {
  const dead = new Set(doc.summary.deadChannels);
  const frames = doc.format.framesDecoded;
  const drafts: Draft[] = [];
  const seenPerKind = new Map<EventKind, number>();
  const attributed = new Set<EventKind>();
  for (const e of doc.events) {
    seenPerKind.set(e.kind, (seenPerKind.get(e.kind) ?? 0) + 1);
    const map = EVENT_RULES[e.kind];
    if (!map) continue;
    const rules = profile.rules.filter((r) => r.type === map.rule && failed.has(r.id));
    if (rules.length === 0) continue;
    attributed.add(e.kind);
    // Only all-channel gaps with signal on both sides; head and tail have their own rules.
    if (e.kind === 'silence' && (e.channel !== null || e.startFrame === 0 || e.endFrame >= frames)) continue;
    if ((e.kind === 'duplicate_channel' || e.kind === 'inverted_channel') && (dead.has(e.channel ?? -1) || dead.has(e.otherChannel ?? -1))) continue;
    const rule = strictestBroken(rules, e);
    if (!rule) continue;
    drafts.push({
      kind: map.kind, ruleId: rule.id, severity: rule.severity, channel: e.channel,
      ...(e.otherChannel !== undefined ? { otherChannel: e.otherChannel } : {}),
      startSample: e.startFrame, endSample: e.endFrame, peakValue: e.peakValue ?? null, mergedEvents: 1, detections: e.count ?? 1,
    });
  }
  // Events the analysis counted but did not keep: not merged, but counted (silence counts mix channels, so not).
  let unseen = 0;
  for (const kind of attributed) if (kind !== 'silence') unseen += Math.max(0, (doc.eventCounts[kind] ?? 0) - (seenPerKind.get(kind) ?? 0));
  return { drafts, unseen };
}

function edgeDrafts(profile: Profile, doc: AnalysisDocument, failed: Set<string>): Draft[] {
  const frames = doc.format.framesDecoded;
  const rate = doc.format.sampleRate;
  const out: Draft[] = [];
  for (const rule of profile.rules) {
    if (!failed.has(rule.id) || (rule.type !== 'head-silence' && rule.type !== 'tail-silence')) continue;
    const head = rule.type === 'head-silence';
    const length = Math.min(frames, Math.round((head ? doc.summary.headSilenceSeconds : doc.summary.tailSilenceSeconds) * rate));
    out.push({
      kind: head ? 'head_silence' : 'tail_silence', ruleId: rule.id, severity: rule.severity, channel: null,
      startSample: head ? 0 : frames - length, endSample: head ? length : frames, peakValue: null, mergedEvents: 1, detections: 1,
    });
  }
  return out;
}

function merge(drafts: Draft[], gapSamples: number): Draft[] {
  const key = (d: Draft) => `${d.kind}|${d.ruleId}|${d.channel}|${d.otherChannel ?? ''}`;
  const sorted = [...drafts].sort((a, b) => key(a).localeCompare(key(b)) || a.startSample - b.startSample);
  const out: Draft[] = [];
  for (const d of sorted) {
    const last = out[out.length - 1];
    if (last && key(last) === key(d) && d.startSample - last.endSample <= gapSamples) {
      last.endSample = Math.max(last.endSample, d.endSample);
      last.mergedEvents += d.mergedEvents;
      last.detections += d.detections;
      if (d.peakValue !== null) {
        const lower = d.kind === 'phase_problem'; // correlation: the lowest is the worst
        last.peakValue = last.peakValue === null ? d.peakValue : lower ? Math.min(last.peakValue, d.peakValue) : Math.max(last.peakValue, d.peakValue);
      }
    } else out.push({ ...d });
  }
  return out;
}

export function buildFlags(profile: Profile, doc: AnalysisDocument, checks: CheckResult[], rate: FrameRate, options: FlagOptions = {}): { flags: Flag[]; flagsTotal: number } {
  const failed = new Set(checks.filter((c) => !c.passed).map((c) => c.ruleId));
  const sampleRate = doc.format.sampleRate;
  const { drafts, unseen } = draftsFromEvents(profile, doc, failed);
  const merged = merge([...drafts, ...edgeDrafts(profile, doc, failed)], Math.round((options.mergeGapSeconds ?? DEFAULT_FLAG_MERGE_SECONDS) * sampleRate));
  const maxFlags = options.maxFlags ?? DEFAULT_MAX_FLAGS;
  const kept = [...merged]
    .sort((a, b) => (a.severity === b.severity ? 0 : a.severity === 'fail' ? -1 : 1) || a.startSample - b.startSample)
    .slice(0, maxFlags)
    .sort((a, b) => a.startSample - b.startSample || (a.channel ?? -1) - (b.channel ?? -1));
  const origin = doc.format.timeReferenceSamples;
  const flags = kept.map((d) => ({
    ...d,
    startSeconds: d.startSample / sampleRate,
    endSeconds: d.endSample / sampleRate,
    startTimecode: timecodeAtSample(d.startSample, sampleRate, rate, origin),
    endTimecode: timecodeAtSample(d.endSample, sampleRate, rate, origin),
  }));
  return { flags, flagsTotal: merged.length + unseen };
}
