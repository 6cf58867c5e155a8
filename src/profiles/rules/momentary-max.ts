// Maximum momentary loudness (400 ms); the lowest limit of the profile becomes the analysis's event threshold.
import type { MomentaryMaxRule } from '../types.ts';
import { atMost } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const momentaryMax: RuleSpec<MomentaryMaxRule> = {
  check: (rule, doc) =>
    atMost(
      'Maximum momentary loudness',
      doc.summary.maxMomentaryLufs,
      rule.maxLufs,
      'LUFS',
      'shorter than 400 ms or silent',
    ),
  analysis: (rules, options) => {
    options.loudness = { ...options.loudness, momentaryLimitLufs: Math.min(...rules.map((r) => r.maxLufs)) };
  },
  events: ['loud_momentary'],
  breaks: (rule, e) => (e.peakValue ?? Infinity) > rule.maxLufs,
};
