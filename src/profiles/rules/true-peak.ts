// Maximum true peak, on the BS.1770-5 Annex 2 reading or the reconstructed one; the lowest ceiling
// of the profile sets where the analysis starts counting overs.
import type { TruePeakRule } from '../types.ts';
import { atMost } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const truePeak: RuleSpec<TruePeakRule> = {
  check: (rule, doc) =>
    rule.reading === 'reconstructed'
      ? atMost('Reconstructed true peak', doc.summary.reconstructedPeakDbtp, rule.maxDbtp, 'dBTP', 'digital silence')
      : atMost('True peak (BS.1770 Annex 2)', doc.summary.truePeakDbtp, rule.maxDbtp, 'dBTP', 'digital silence'),
  analysis: (rules, options) => {
    const ceiling = Math.min(...rules.map((r) => r.maxDbtp));
    options.truePeak = { overCeilingDbtp: ceiling };
    options.reconstructedPeak = { overCeilingDbtp: ceiling };
  },
  events: ['true_peak_over', 'reconstructed_over'],
  // An over of the reading this rule does not judge, or at or under its ceiling, does not break it.
  breaks: (rule, e) =>
    (e.kind === 'reconstructed_over') === (rule.reading === 'reconstructed') &&
    (e.peakValue ?? Infinity) > rule.maxDbtp,
};
