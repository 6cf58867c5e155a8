// Dropouts inside the programme; `channels` scopes the rule to channel roles, and all-channel
// dropouts always count. Silences of the line-up head or tail (tone, gaps, sync pop) are not
// dropouts of the programme (head.ts lineUpSpans).
import { channelName, type AnalysisDocument } from '../../engine/document.ts';
import { inLineUp } from '../head.ts';
import type { DropoutRule } from '../types.ts';
import { count } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

const inScope = (rule: DropoutRule, doc: AnalysisDocument, channel: number) =>
  !rule.channels || rule.channels.some((l) => l === doc.format.channelLabels[channel]);

export const dropouts: RuleSpec<DropoutRule> = {
  check: (rule, doc) => {
    // A cut event list keeps the earliest events, so the head's are in it; a tail cut off the
    // list stays counted (never fewer dropouts than were found).
    const lineUp = doc.events.filter((e) => e.kind === 'dropout' && inLineUp(doc, e));
    const excluded = (channel: number | null) => lineUp.filter((e) => e.channel === channel).length;
    const allChannel = doc.summary.allChannelDropouts - excluded(null);
    const perChannel = doc.channels
      .filter((c) => inScope(rule, doc, c.index))
      .map((c) => ({ index: c.index, dropouts: c.dropouts - excluded(c.index) }))
      .filter((c) => c.dropouts > 0);
    const n = allChannel + perChannel.reduce((sum, c) => sum + c.dropouts, 0);
    const scope = rule.channels ? ` in ${rule.channels.join(', ')}` : '';
    // Each count says its noun, so no number in the text stands without one.
    const dropouts = (k: number) => `${k} dropout${k === 1 ? '' : 's'}`;
    const where = [
      ...(allChannel > 0 ? [`${dropouts(allChannel)} in all channels`] : []),
      ...perChannel.map((c) => `${dropouts(c.dropouts)} in ch ${channelName(doc, c.index)}`),
      ...(lineUp.length > 0 ? [`${dropouts(lineUp.length)} in the line-up not counted`] : []),
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
  breaks: (rule, e, doc) => !inLineUp(doc, e) && (e.channel === null || inScope(rule, doc, e.channel)),
};
