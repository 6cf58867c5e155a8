// Dialogue-gated loudness (analysis/speech/dialogue.ts): a target with its tolerance, or a range.
// Where the programme holds too little speech the rule is not applied, unless it requires dialogue.
import { DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT } from '../../analysis/speech/meter.ts';
import type { DialogueLoudnessRule } from '../types.ts';
import { rangeLimit, within } from './drafts.ts';
import { askForSpeech, dialogueLufsFor } from './dialogue-common.ts';
import { orderIssues } from './issues.ts';
import type { ProfileIssue, RuleSpec } from './rule-spec.ts';

const WHAT = 'Dialogue loudness';

function limitsOf(rule: DialogueLoudnessRule): { min?: number; max?: number } {
  const { targetLufs: t, toleranceLu: tol } = rule;
  if (t !== undefined && tol !== undefined) return { min: t - tol, max: t + tol };
  return { min: rule.minLufs, max: rule.maxLufs };
}

export const dialogueLoudness: RuleSpec<DialogueLoudnessRule> = {
  check: (rule, doc) => {
    const limit =
      rule.targetLufs !== undefined && rule.toleranceLu !== undefined
        ? { targetLufs: rule.targetLufs, toleranceLu: rule.toleranceLu }
        : rangeLimit(rule.minLufs, rule.maxLufs);
    const minShare = rule.minSpeechSharePercent ?? DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT;
    const value = dialogueLufsFor(doc, WHAT, 'LUFS', limit, minShare, rule.requireDialogue === true);
    if (typeof value !== 'number') return value;
    const { min, max } = limitsOf(rule);
    const draft = within(WHAT, value, min, max, 'LUFS', 'LU');
    const share = doc.dialogue.speechSharePercent ?? 0;
    return { ...draft, limit, explanation: `${draft.explanation} (speech in ${share.toFixed(1)} % of the programme)` };
  },
  issues: (rule, at): ProfileIssue[] => {
    const range = rule.minLufs !== undefined || rule.maxLufs !== undefined;
    const out: ProfileIssue[] = [];
    if (!range && rule.toleranceLu === undefined)
      out.push({ field: `${at}.toleranceLu`, message: `${at} needs targetLufs with toleranceLu, or minLufs/maxLufs` });
    if (range && rule.toleranceLu !== undefined)
      out.push({ field: `${at}.toleranceLu`, message: `${at}.toleranceLu cannot be combined with minLufs/maxLufs` });
    out.push(...orderIssues(at, 'minLufs', 'maxLufs', rule.minLufs, rule.maxLufs));
    return out;
  },
  analysis: (rules, options) => {
    for (const rule of rules) askForSpeech(options, rule.minSpeechSharePercent);
  },
};
