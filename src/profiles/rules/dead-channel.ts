// No channel may be digital silence throughout.
import { channelName } from '../../engine/document.ts';
import type { DeadChannelRule } from '../types.ts';
import { verdictOf } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const deadChannel: RuleSpec<DeadChannelRule> = {
  check: (_rule, doc) => {
    const dead = doc.summary.deadChannels;
    const passed = dead.length === 0;
    return {
      measured: dead,
      unit: 'channels',
      limit: { max: 0 },
      outcome: verdictOf(passed),
      passed,
      explanation: passed
        ? 'No channel is digital silence throughout'
        : `Channel ${dead.map((c) => channelName(doc, c)).join(', ')} is digital silence throughout`,
    };
  },
  events: ['dead_channel'],
};
