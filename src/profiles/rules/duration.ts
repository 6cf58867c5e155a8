// Programme duration, minSeconds and/or maxSeconds.
import type { DurationRule } from '../types.ts';
import { within } from './drafts.ts';
import { rangeIssues } from './issues.ts';
import type { RuleSpec } from './rule-spec.ts';

export const duration: RuleSpec<DurationRule> = {
  check: (rule, doc) =>
    within(
      'Duration',
      doc.format.durationSeconds ?? doc.format.framesDecoded / doc.format.sampleRate,
      rule.minSeconds,
      rule.maxSeconds,
      's',
      's',
    ),
  issues: (rule, at) => rangeIssues(at, 'minSeconds', 'maxSeconds', rule.minSeconds, rule.maxSeconds),
};
