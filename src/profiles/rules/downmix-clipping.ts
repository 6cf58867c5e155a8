// Runs of Lo/Ro downmix samples at or over full scale: where a fixed-point fold-down would clip.
import type { DownmixClippingRule } from '../types.ts';
import { count } from './drafts.ts';
import { askForDownmix, loRoOf } from './downmix-common.ts';
import type { RuleSpec } from './rule-spec.ts';

export const downmixClipping: RuleSpec<DownmixClippingRule> = {
  check: (rule, doc) => {
    const max = rule.maxRuns ?? 0;
    const loRo = loRoOf(doc, 'Downmix (Lo/Ro) clipping', 'runs', { max });
    if ('explanation' in loRo) return loRo;
    const runs = loRo.clipRuns;
    return count(
      runs === 1 ? 'downmix clipping run' : 'downmix clipping runs',
      runs,
      max,
      'runs',
      ` of Lo/Ro samples at or over full scale (${loRo.clippedSamples} samples)`,
    );
  },
  analysis: (_rules, options) => askForDownmix(options),
  events: ['downmix_clipping'],
};
