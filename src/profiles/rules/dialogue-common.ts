// What the dialogue rules share: asking the analysis for the speech detector, and the dialogue
// reading when a rule can use it (a Draft saying why not otherwise).
import type { AnalysisOptions } from '../../analysis/runner.ts';
import { DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT } from '../../analysis/speech/meter.ts';
import type { AnalysisDocument } from '../../engine/document.ts';
import { fmt } from '../format.ts';
import type { CheckLimit } from '../report.ts';
import { notMeasurable } from './drafts.ts';
import type { Draft } from './rule-spec.ts';

/** Runs the speech detector; the document's dialogue reading needs the lowest share any rule accepts. */
export function askForSpeech(options: AnalysisOptions, minSpeechSharePercent?: number): void {
  const asked = minSpeechSharePercent ?? DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT;
  const current = options.speech?.minimumSharePercent;
  options.speech = {
    ...options.speech,
    enabled: true,
    minimumSharePercent: current === undefined ? asked : Math.min(current, asked),
  };
}

/** Why the document has no dialogue reading for a rule that wants `minSharePercent`; null when it has one. */
export function whyNoDialogue(doc: AnalysisDocument, minSharePercent: number): string | null {
  const d = doc.dialogue;
  if (!d.measured) return 'the analysis did not run the speech detector';
  if (d.speechSharePercent === null || d.speechSharePercent < minSharePercent)
    return `speech in ${fmt(d.speechSharePercent ?? 0)} % of the programme's gating blocks, under the ${minSharePercent} % a dialogue reading needs`;
  if (d.dialogueLufs === null) return d.note ?? 'no speech block is above the -70 LUFS absolute gate';
  return null;
}

/** The dialogue loudness, or the Draft of a rule that cannot be judged (passes unless `required`). */
export function dialogueLufsFor(
  doc: AnalysisDocument,
  what: string,
  unit: string,
  limit: CheckLimit,
  minSharePercent: number,
  required: boolean,
): number | Draft {
  const why = whyNoDialogue(doc, minSharePercent);
  // Without the detector's run nothing can be said: that fails whatever `required` says.
  if (why !== null) return notMeasurable(what, unit, limit, why, !required && doc.dialogue.measured);
  return doc.dialogue.dialogueLufs ?? notMeasurable(what, unit, limit, 'no dialogue reading', !required);
}
