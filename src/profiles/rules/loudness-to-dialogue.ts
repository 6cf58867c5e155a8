// Loudness-to-dialogue ratio (EBU R 128 s4): the programme's integrated loudness minus the
// dialogue-gated loudness. Not applied where the programme holds too little speech.
import { DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT } from '../../analysis/speech/meter.ts';
import type { LoudnessToDialogueRule } from '../types.ts';
import { notMeasurable, within } from './drafts.ts';
import { askForSpeech, dialogueLufsFor } from './dialogue-common.ts';
import { orderIssues } from './issues.ts';
import type { RuleSpec } from './rule-spec.ts';

const WHAT = 'Loudness-to-dialogue ratio';

export const loudnessToDialogue: RuleSpec<LoudnessToDialogueRule> = {
  check: (rule, doc) => {
    const limit = {
      ...(rule.minLu !== undefined ? { min: rule.minLu } : {}),
      ...(rule.maxLu !== undefined ? { max: rule.maxLu } : {}),
    };
    const dialogue = dialogueLufsFor(doc, WHAT, 'LU', limit, DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT, false);
    if (typeof dialogue !== 'number') return dialogue;
    const ratio = doc.dialogue.loudnessToDialogueLu;
    if (ratio === null) return notMeasurable(WHAT, 'LU', limit, 'the programme has no integrated loudness', false);
    const draft = within(WHAT, ratio, rule.minLu, rule.maxLu, 'LU', 'LU');
    const programme = doc.summary.integratedLufs ?? 0;
    return {
      ...draft,
      limit,
      explanation: `${draft.explanation} (programme ${programme.toFixed(1)} LUFS, dialogue ${dialogue.toFixed(1)} LUFS)`,
    };
  },
  issues: (rule, at) => [
    ...(rule.minLu === undefined && rule.maxLu === undefined
      ? [{ field: `${at}.maxLu`, message: `${at} needs maxLu and/or minLu` }]
      : []),
    ...orderIssues(at, 'minLu', 'maxLu', rule.minLu, rule.maxLu),
  ],
  analysis: (_rules, options) => askForSpeech(options),
};
