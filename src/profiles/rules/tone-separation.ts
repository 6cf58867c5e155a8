// The line-up tone ends in silence before the programme: a tone that runs up to or into the
// programme, or a gap shorter than minGapSeconds, breaks the rule. No tone: nothing to separate.
import { fmt, fmtAgainst } from '../format.ts';
import type { ToneSeparationRule } from '../types.ts';
import { verdictOf } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

/** Our default. */
export const DEFAULT_TONE_GAP_SECONDS = 0.1;

export const toneSeparation: RuleSpec<ToneSeparationRule> = {
  check: (rule, doc) => {
    const head = doc.head;
    const min = rule.minGapSeconds ?? DEFAULT_TONE_GAP_SECONDS;
    const base = { unit: 's', limit: { min } };
    if (head.toneSegments.length === 0 || head.programmeStartSeconds === null || head.toneGapSeconds === null) {
      const why = head.toneSegments.length === 0 ? 'no line-up tone' : 'no programme after the tone';
      return { ...base, measured: null, outcome: 'pass', passed: true, explanation: `Nothing to separate (${why})` };
    }
    const gap = head.toneGapSeconds;
    const passed = !head.toneIntoProgramme && gap >= min;
    const at = fmt(head.programmeStartSeconds, 3);
    return {
      ...base,
      measured: gap,
      outcome: verdictOf(passed),
      passed,
      explanation: head.toneIntoProgramme
        ? `Line-up tone runs into the programme at ${at} s`
        : passed
          ? `${fmt(gap, 2)} s of silence between the line-up tone and the programme (at least ${min} s)`
          : `Only ${fmtAgainst(gap, min, 3)} s between the line-up tone and the programme at ${at} s (at least ${min} s)`,
    };
  },
};
