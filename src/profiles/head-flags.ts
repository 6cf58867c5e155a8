// Flags of the head (analysis/head.ts): each line-up tone segment, a tone that runs into the
// programme, each sync pop found, and a pop a sync-pop rule expects but did not find (at the place
// expected). Judged by the rule of their type when it is broken; otherwise remarks. Only a profile
// that judges the head (any of those rule types) gets them: a file that is one long test tone is
// not a line-up for every other profile.
import type { AnalysisDocument } from '../engine/document.ts';
import { type FlagDraft, ruleVerdict } from './flags.ts';
import { sampleOfFrame } from './head.ts';
import type { CheckResult } from './report.ts';
import { expectedFrame } from './rules/sync-pop.ts';
import type { FrameRate } from './timecode.ts';
import type { Profile, Rule } from './types.ts';

const point = { count: 1, detections: 1 };
const HEAD_RULES = new Set<Rule['type']>(['line-up-tone', 'tone-separation', 'sync-pop']);

export function headDrafts(
  profile: Profile,
  doc: AnalysisDocument,
  checks: Map<string, CheckResult>,
  rate: FrameRate,
): FlagDraft[] {
  const head = doc.head;
  const out: FlagDraft[] = [];
  if (!profile.rules.some((r) => HEAD_RULES.has(r.type))) return out;
  const tone = ruleVerdict(profile, checks, 'line-up-tone');
  for (const s of head.toneSegments) {
    out.push({
      kind: 'line_up_tone',
      ...tone,
      channel: s.channel,
      startSample: s.startFrame,
      endSample: s.endFrame,
      worstValue: s.rmsAes17Db,
      ...point,
    });
  }
  const separation = ruleVerdict(profile, checks, 'tone-separation');
  const lastToneEnd = Math.max(-1, ...head.toneSegments.map((s) => s.endFrame));
  if (
    head.programmeStartFrame !== null &&
    lastToneEnd >= 0 &&
    (head.toneIntoProgramme || separation.severity !== 'remark')
  ) {
    out.push({
      kind: 'tone_into_programme',
      ...separation,
      channel: null,
      startSample: Math.min(lastToneEnd, head.programmeStartFrame),
      endSample: head.programmeStartFrame,
      worstValue: null,
      ...point,
    });
  }
  for (const tail of [false, true]) {
    const pop = tail ? head.tailPop : head.headPop;
    const applies = (r: Rule) => r.type === 'sync-pop' && (r.position === 'tail') === tail;
    const judged = ruleVerdict(profile, checks, 'sync-pop', applies);
    if (pop) {
      out.push({
        kind: 'sync_pop',
        ...judged,
        channel: pop.channels.length === 1 ? (pop.channels[0] ?? null) : null,
        startSample: pop.startFrame,
        endSample: pop.endFrame,
        worstValue: pop.peakDbfs,
        ...point,
      });
      continue;
    }
    for (const rule of profile.rules) {
      if (rule.type !== 'sync-pop' || !applies(rule)) continue;
      const frame = expectedFrame(rule, doc, rate);
      const check = checks.get(rule.id);
      if (typeof frame !== 'number' || !check || check.passed) continue;
      const at = Math.min(doc.format.framesDecoded, Math.max(0, sampleOfFrame(doc, frame, rate)));
      out.push({
        kind: 'sync_pop_missing',
        ruleId: rule.id,
        severity: check.severity,
        channel: null,
        startSample: at,
        endSample: at,
        worstValue: null,
        ...point,
      });
    }
  }
  return out;
}
