// Allowed sample rates.
import type { SampleRateRule } from '../types.ts';
import { membership } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const sampleRate: RuleSpec<SampleRateRule> = {
  check: (rule, doc) => membership('Sample rate', doc.format.sampleRate, rule.allowedHz, 'Hz'),
};
