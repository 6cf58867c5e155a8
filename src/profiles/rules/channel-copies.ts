// No channel may be a copy (duplicate) or polarity-inverted copy (inverted) of another; pairs with a
// dead channel are the dead-channel rule's.
import { channelName, type AnalysisDocument } from '../../engine/document.ts';
import type { ChannelCopyRule } from '../types.ts';
import { verdictOf } from './drafts.ts';
import type { Draft, RuleSpec } from './rule-spec.ts';

function copies(inverted: boolean, doc: AnalysisDocument): Draft {
  const dead = new Set(doc.summary.deadChannels);
  const hits = doc.channelPairs.filter(
    (p) =>
      !dead.has(p.channel) &&
      !dead.has(p.otherChannel) &&
      (inverted ? p.inverted || p.nearInverted : p.identical || p.nearIdentical),
  );
  const names = hits.map(
    (p) => `${channelName(doc, p.otherChannel)}${inverted ? ' = -' : ' = '}${channelName(doc, p.channel)}`,
  );
  // In words, each channel number after "ch" so it does not read as a value.
  const shown = hits.map(
    (p) => `ch ${channelName(doc, p.otherChannel)} = ${inverted ? 'inverted ' : ''}ch ${channelName(doc, p.channel)}`,
  );
  const passed = hits.length === 0;
  const what = inverted ? 'polarity-inverted copy' : 'duplicate';
  return {
    measured: names,
    unit: 'pairs',
    limit: { max: 0 },
    outcome: verdictOf(passed),
    passed,
    explanation: passed
      ? `No channel is a ${what} of another`
      : `${hits.length} channel pair${hits.length > 1 ? 's are' : ' is a'} ${what}${hits.length > 1 ? 's' : ''}: ${shown.join('; ')}`,
  };
}

export const duplicateChannels: RuleSpec<ChannelCopyRule> = {
  check: (_rule, doc) => copies(false, doc),
  events: ['duplicate_channel'],
};
export const invertedChannels: RuleSpec<ChannelCopyRule> = {
  check: (_rule, doc) => copies(true, doc),
  events: ['inverted_channel'],
};
