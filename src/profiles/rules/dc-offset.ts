// Largest per-channel DC offset.
import type { DcOffsetRule } from '../types.ts';
import { atMost } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const dcOffset: RuleSpec<DcOffsetRule> = {
  check: (rule, doc) => {
    const values = doc.channels.map((c) => c.dcOffsetDbfs).filter((v): v is number => v !== null);
    return atMost(
      'Largest DC offset',
      values.length > 0 ? Math.max(...values) : null,
      rule.maxDbfs,
      'dBFS',
      'no offset at all',
    );
  },
};
