// Allowed containers.
import type { ContainerRule } from '../types.ts';
import { membership } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const container: RuleSpec<ContainerRule> = {
  check: (rule, doc) => membership('Container', doc.format.container, rule.allowed, null),
};
