// Longest all-channel silence inside the programme. Silence events are only needed for gaps longer
// than the shortest allowed gap, so that sets the detector's minimum duration.
import type { SilenceGapRule } from '../types.ts';
import { within } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';
import { applySilenceThreshold, silenceThresholdSetting } from './silence-threshold.ts';

export const silenceGap: RuleSpec<SilenceGapRule> = {
  check: (rule, doc) =>
    within(
      'Longest silence inside the programme',
      doc.summary.longestInternalGapSeconds,
      undefined,
      rule.maxSeconds,
      's',
      's',
    ),
  settings: (rule, at) => silenceThresholdSetting(rule.thresholdDbfs, at),
  analysis: (rules, options) => {
    applySilenceThreshold(
      rules.map((r) => r.thresholdDbfs),
      options,
    );
    options.silence = { ...options.silence, minDurationSeconds: Math.min(...rules.map((r) => r.maxSeconds)) };
  },
  // Flags judge the programme's own silences (not a channel's) against this rule: see flags.ts.
  breaks: (rule, e, doc) => e.endFrame - e.startFrame > rule.maxSeconds * doc.format.sampleRate,
};
