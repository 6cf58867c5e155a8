// Line-up tone before the programme: required or forbidden; a required tone is judged on its
// longest segment's duration and on every judged segment's frequency and level (the AES17 reading).
import { channelName, type AnalysisDocument } from '../../engine/document.ts';
import { fmt, fmtAgainst } from '../format.ts';
import type { LineUpToneRule } from '../types.ts';
import { verdictOf } from './drafts.ts';
import type { Draft, RuleSpec } from './rule-spec.ts';

/** The end of `target ± tolerance` on the side of `value`: a broken reading is shown against it. */
const edge = (value: number, target: number, tolerance: number): number =>
  target + (value > target ? tolerance : -tolerance);

/** Our defaults. */
export const DEFAULT_TONE_FREQUENCY_TOLERANCE_HZ = 1;
export const DEFAULT_TONE_LEVEL_TOLERANCE_DB = 0.5;

const inScope = (rule: LineUpToneRule, doc: AnalysisDocument, channel: number) =>
  !rule.channels || rule.channels.some((l) => l === doc.format.channelLabels[channel]);

function required(rule: LineUpToneRule, doc: AnalysisDocument): Draft {
  const all = doc.head.toneSegments;
  const limit = rule.minSeconds !== undefined ? { min: rule.minSeconds } : {};
  if (all.length === 0)
    return {
      measured: null,
      unit: 's',
      limit,
      outcome: 'fail',
      passed: false,
      explanation: 'No line-up tone before the programme',
    };
  const longest = all.reduce((a, b) => (b.endSeconds - b.startSeconds > a.endSeconds - a.startSeconds ? b : a));
  const seconds = longest.endSeconds - longest.startSeconds;
  const problems: string[] = [];
  if (rule.minSeconds !== undefined && seconds < rule.minSeconds)
    problems.push(
      `the longest tone lasts ${fmtAgainst(seconds, rule.minSeconds, 2)} s, under the ${rule.minSeconds} s minimum`,
    );
  const judged = all.filter((s) => inScope(rule, doc, s.channel));
  for (const s of judged) {
    const where = `channel ${channelName(doc, s.channel)} at ${fmt(s.startSeconds, 2)} s`;
    const hzTolerance = rule.frequencyToleranceHz ?? DEFAULT_TONE_FREQUENCY_TOLERANCE_HZ;
    if (rule.frequencyHz !== undefined && Math.abs(s.frequencyHz - rule.frequencyHz) > hzTolerance)
      problems.push(
        `${where}: ${fmtAgainst(s.frequencyHz, edge(s.frequencyHz, rule.frequencyHz, hzTolerance), 1)} Hz, not ${rule.frequencyHz} +/- ${hzTolerance} Hz`,
      );
    const dbTolerance = rule.levelToleranceDb ?? DEFAULT_TONE_LEVEL_TOLERANCE_DB;
    if (rule.levelDbfs !== undefined && Math.abs(s.rmsAes17Db - rule.levelDbfs) > dbTolerance)
      problems.push(
        `${where}: ${fmtAgainst(s.rmsAes17Db, edge(s.rmsAes17Db, rule.levelDbfs, dbTolerance), 2)} dBFS, not ${rule.levelDbfs} +/- ${dbTolerance} dB`,
      );
  }
  const passed = problems.length === 0;
  const reading = `${fmt(longest.frequencyHz, 1)} Hz at ${fmt(longest.rmsAes17Db, 2)} dBFS for ${fmt(seconds, 2)} s`;
  const channels = new Set(all.map((s) => s.channel)).size;
  return {
    measured: [Math.round(longest.frequencyHz * 10) / 10, Math.round(longest.rmsAes17Db * 100) / 100, seconds],
    unit: 'Hz, dBFS, s',
    limit,
    outcome: verdictOf(passed),
    passed,
    explanation: passed
      ? `Line-up tone ${reading} in ${channels} channel${channels === 1 ? '' : 's'}`
      : `Line-up tone ${reading}: ${problems.slice(0, 3).join('; ')}${problems.length > 3 ? ` (+${problems.length - 3} more)` : ''}`,
  };
}

export const lineUpTone: RuleSpec<LineUpToneRule> = {
  check: (rule, doc) => {
    if ((rule.presence ?? 'required') === 'required') return required(rule, doc);
    const n = doc.head.toneSegmentsTotal;
    const passed = n === 0;
    return {
      measured: n,
      unit: 'segments',
      limit: { max: 0 },
      outcome: verdictOf(passed),
      passed,
      explanation: passed
        ? 'No line-up tone, none allowed'
        : `Line-up tone found (${n} segment${n === 1 ? '' : 's'} from ${fmt(doc.head.toneSegments[0]?.startSeconds ?? 0, 2)} s); none allowed`,
    };
  },
};
