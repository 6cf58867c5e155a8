// One entry per rule type; the compiler insists on every type of the Rule union (types.ts).
// A new rule: its interface in types.ts, its file here, its entry below, then `npm run openapi`.
import type { Rule, RuleType } from '../types.ts';
import { bitDepth } from './bit-depth.ts';
import { duplicateChannels, invertedChannels } from './channel-copies.ts';
import { channels } from './channels.ts';
import { clipping } from './clipping.ts';
import { container } from './container.ts';
import { dcOffset } from './dc-offset.ts';
import { deadChannel } from './dead-channel.ts';
import { declaredLoudness } from './declared-loudness.ts';
import { dialogueLoudness } from './dialogue-loudness.ts';
import { loudnessToDialogue } from './loudness-to-dialogue.ts';
import { speechShare } from './speech-share.ts';
import { downmixClipping } from './downmix-clipping.ts';
import { downmixLoudness } from './downmix-loudness.ts';
import { downmixTruePeak } from './downmix-true-peak.ts';
import { dropouts } from './dropouts.ts';
import { duration } from './duration.ts';
import { headSilence, tailSilence } from './edge-silence.ts';
import { integratedLoudness } from './integrated-loudness.ts';
import { integrity } from './integrity.ts';
import { lineUpTone } from './line-up-tone.ts';
import { loudnessRange } from './loudness-range.ts';
import { momentaryMax } from './momentary-max.ts';
import { monoCompatibility } from './mono-compatibility.ts';
import { phase } from './phase.ts';
import type { RuleRegistry, RuleSpec } from './rule-spec.ts';
import { samplePeak } from './sample-peak.ts';
import { sampleRate } from './sample-rate.ts';
import { shortTermMax } from './short-term-max.ts';
import { silenceGap } from './silence-gap.ts';
import { syncPop } from './sync-pop.ts';
import { toneSeparation } from './tone-separation.ts';
import { truePeak } from './true-peak.ts';

/** In the order analysis settings are gathered (options.ts). */
export const RULES: RuleRegistry = {
  'integrated-loudness': integratedLoudness,
  'true-peak': truePeak,
  'sample-peak': samplePeak,
  'loudness-range': loudnessRange,
  'short-term-max': shortTermMax,
  'momentary-max': momentaryMax,
  clipping,
  'silence-gap': silenceGap,
  'head-silence': headSilence,
  'tail-silence': tailSilence,
  'dead-channel': deadChannel,
  'duplicate-channels': duplicateChannels,
  'inverted-channels': invertedChannels,
  phase,
  'dc-offset': dcOffset,
  'sample-rate': sampleRate,
  'bit-depth': bitDepth,
  channels,
  duration,
  container,
  dropouts,
  'line-up-tone': lineUpTone,
  'tone-separation': toneSeparation,
  'sync-pop': syncPop,
  integrity,
  'declared-loudness': declaredLoudness,
  'downmix-loudness': downmixLoudness,
  'downmix-true-peak': downmixTruePeak,
  'downmix-clipping': downmixClipping,
  'mono-compatibility': monoCompatibility,
  'dialogue-loudness': dialogueLoudness,
  'speech-share': speechShare,
  'loudness-to-dialogue': loudnessToDialogue,
};

export function isRuleType(value: string): value is RuleType {
  return Object.hasOwn(RULES, value);
}

/** Every rule type, in registry order. */
export const RULE_TYPES: readonly RuleType[] = Object.keys(RULES).filter(isRuleType);

/** The spec of a rule's own type (each entry takes the rule interface its key names). */
export function ruleSpec(rule: Rule): RuleSpec<Rule> {
  return RULES[rule.type];
}

export type { Draft, ProfileIssue, RuleSpec } from './rule-spec.ts';
