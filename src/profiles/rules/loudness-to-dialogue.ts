// Loudness-to-dialogue ratio (EBU R 128 s4): the programme's integrated loudness minus the
// dialogue-gated loudness. Not applied where the programme holds too little speech.
import { DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT } from '../../analysis/speech/meter.ts';
import type { LoudnessToDialogueRule } from '../types.ts';
import { notMeasurable, rangeLimit, within } from './drafts.ts';
import { askForSpeech, dialogueLufsFor } from './dialogue-common.ts';
import { rangeIssues } from './issues.ts';
import type { RuleSpec } from './rule-spec.ts';

const WHAT = 'Loudness-to-dialogue ratio';

export const loudnessToDialogue: RuleSpec<LoudnessToDialogueRule> = {
  check: (rule, doc) => {
    const limit = rangeLimit(rule.minLu, rule.maxLu);
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
  issues: (rule, at) => rangeIssues(at, 'minLu', 'maxLu', rule.minLu, rule.maxLu),
  analysis: (_rules, options) => askForSpeech(options),
};
