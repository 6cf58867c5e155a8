// Maximum sample peak.
import type { SamplePeakRule } from '../types.ts';
import { atMost } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const samplePeak: RuleSpec<SamplePeakRule> = {
  check: (rule, doc) => atMost('Sample peak', doc.summary.samplePeakDbfs, rule.maxDbfs, 'dBFS', 'digital silence'),
};
