// Channel count and/or exact layout (labels in order).
import type { ChannelsRule } from '../types.ts';
import { verdictOf } from './drafts.ts';
import { needOneIssues } from './issues.ts';
import type { RuleSpec } from './rule-spec.ts';

export const channels: RuleSpec<ChannelsRule> = {
  check: (rule, doc) => {
    const labels = doc.format.channelLabels;
    const countOk = rule.count === undefined || doc.format.channels === rule.count;
    const layoutOk =
      rule.layout === undefined ||
      (rule.layout.length === labels.length && rule.layout.every((l, i) => labels[i] === l));
    const passed = countOk && layoutOk;
    const layout = labels.join(' ');
    const wanted = [
      rule.count !== undefined ? `${rule.count} channels` : '',
      rule.layout ? `layout ${rule.layout.join(' ')}` : '',
    ]
      .filter(Boolean)
      .join(', ');
    return {
      measured: labels,
      unit: null,
      limit: {
        ...(rule.count !== undefined ? { min: rule.count, max: rule.count } : {}),
        ...(rule.layout ? { allowed: rule.layout } : {}),
      },
      outcome: verdictOf(passed),
      passed,
      explanation: `${doc.format.channels} channel${doc.format.channels === 1 ? '' : 's'} (${layout})${passed ? ' as required' : `, but ${wanted} required`}`,
    };
  },
  issues: (rule, at) => [
    ...needOneIssues(at, ['count', 'layout'], [rule.count, rule.layout]),
    ...(rule.count !== undefined && rule.layout !== undefined && rule.layout.length !== rule.count
      ? [
          {
            field: `${at}.layout`,
            message: `${at}.layout has ${rule.layout.length} channels, count says ${rule.count}`,
          },
        ]
      : []),
  ],
};
