// Loudness range (EBU Tech 3342), minLu and/or maxLu.
import type { LoudnessRangeRule } from '../types.ts';
import { notMeasurable, rangeLimit, within } from './drafts.ts';
import { rangeIssues } from './issues.ts';
import type { RuleSpec } from './rule-spec.ts';

export const loudnessRange: RuleSpec<LoudnessRangeRule> = {
  check: (rule, doc) => {
    const lra = doc.summary.loudnessRangeLu;
    const limit = rangeLimit(rule.minLu, rule.maxLu);
    if (lra === null) return notMeasurable('Loudness range', 'LU', limit, 'no short-term value passes the gates');
    return within('Loudness range', lra, rule.minLu, rule.maxLu, 'LU', 'LU');
  },
  issues: (rule, at) => rangeIssues(at, 'minLu', 'maxLu', rule.minLu, rule.maxLu),
};
