// Dropouts inside the programme; `channels` scopes the rule to channel roles, and all-channel
// dropouts always count.
import { channelName, type AnalysisDocument } from '../../engine/document.ts';
import type { DropoutRule } from '../types.ts';
import { count } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

const inScope = (rule: DropoutRule, doc: AnalysisDocument, channel: number) =>
  !rule.channels || rule.channels.some((l) => l === doc.format.channelLabels[channel]);

export const dropouts: RuleSpec<DropoutRule> = {
  check: (rule, doc) => {
    const perChannel = doc.channels.filter((c) => inScope(rule, doc, c.index) && c.dropouts > 0);
    const n = doc.summary.allChannelDropouts + perChannel.reduce((sum, c) => sum + c.dropouts, 0);
    const scope = rule.channels ? ` in ${rule.channels.join(', ')}` : '';
    const where = [
      ...(doc.summary.allChannelDropouts > 0 ? [`${doc.summary.allChannelDropouts} in all channels`] : []),
      ...perChannel.map((c) => `${c.dropouts} in ${channelName(doc, c.index)}`),
    ];
    return count(
      n === 1 ? `dropout${scope}` : `dropouts${scope}`,
      n,
      rule.maxCount ?? 0,
      'dropouts',
      where.length > 0 ? ` (${where.join(', ')})` : '',
    );
  },
  events: ['dropout'],
  breaks: (rule, e, doc) => e.channel === null || inScope(rule, doc, e.channel),
};
