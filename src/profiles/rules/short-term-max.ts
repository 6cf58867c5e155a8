// Maximum short-term loudness (3 s); the lowest limit of the profile becomes the analysis's event threshold.
import type { ShortTermMaxRule } from '../types.ts';
import { atMost } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const shortTermMax: RuleSpec<ShortTermMaxRule> = {
  check: (rule, doc) =>
    atMost(
      'Maximum short-term loudness',
      doc.summary.maxShortTermLufs,
      rule.maxLufs,
      'LUFS',
      'shorter than 3 s or silent',
    ),
  analysis: (rules, options) => {
    options.loudness = { ...options.loudness, shortTermLimitLufs: Math.min(...rules.map((r) => r.maxLufs)) };
  },
  events: ['loud_short_term'],
  breaks: (rule, e) => (e.peakValue ?? Infinity) > rule.maxLufs,
};
