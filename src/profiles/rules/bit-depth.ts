// Minimum stored bits per sample; a lossy encoding has none and fails.
import type { BitDepthRule } from '../types.ts';
import { within } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const bitDepth: RuleSpec<BitDepthRule> = {
  check: (rule, doc) => {
    const bits = doc.format.bitsPerSample;
    if (bits === null)
      return {
        measured: doc.format.encoding,
        unit: null,
        limit: { min: rule.minBits },
        outcome: 'fail',
        passed: false,
        explanation: `Encoding ${doc.format.encoding} is lossy and has no bit depth; at least ${rule.minBits}-bit PCM is required`,
      };
    return within('Bit depth', bits, rule.minBits, undefined, 'bits', 'bits');
  },
};
