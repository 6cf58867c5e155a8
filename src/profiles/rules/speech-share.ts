// The share of the programme's gating blocks that hold speech (analysis/speech/dialogue.ts).
import type { SpeechShareRule } from '../types.ts';
import { notMeasurable, rangeLimit, within } from './drafts.ts';
import { askForSpeech } from './dialogue-common.ts';
import { rangeIssues } from './issues.ts';
import type { RuleSpec } from './rule-spec.ts';

const WHAT = 'Speech share';

export const speechShare: RuleSpec<SpeechShareRule> = {
  check: (rule, doc) => {
    const limit = rangeLimit(rule.minPercent, rule.maxPercent);
    const share = doc.dialogue.speechSharePercent;
    if (!doc.dialogue.measured || share === null)
      return notMeasurable(WHAT, '%', limit, 'the analysis did not run the speech detector', false);
    return { ...within(WHAT, share, rule.minPercent, rule.maxPercent, '%', 'points'), limit };
  },
  issues: (rule, at) => rangeIssues(at, 'minPercent', 'maxPercent', rule.minPercent, rule.maxPercent),
  analysis: (_rules, options) => askForSpeech(options),
};
