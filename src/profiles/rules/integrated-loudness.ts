// Integrated loudness (ITU-R BS.1770): a target with tolerances (EBU R 128 items h and i), or a
// range. Not measurable fails: a delivery must have a measurable programme.
import type { AnalysisDocument } from '../../engine/document.ts';
import { fmt, fmtAgainst, fmtGap, fmtLimit } from '../format.ts';
import type { CheckLimit } from '../report.ts';
import type { IntegratedLoudnessRule } from '../types.ts';
import { notMeasurable, verdictOf, within } from './drafts.ts';
import { askForSpeech, whyNoDialogue } from './dialogue-common.ts';
import { orderIssues } from './issues.ts';
import type { Draft, ProfileIssue, RuleSpec } from './rule-spec.ts';

/** Why there is no integrated loudness, in plain words. */
export function whyNoLoudness(doc: AnalysisDocument): string {
  const frames = doc.format.framesDecoded;
  if (frames === 0) return 'the file holds no audio';
  if (frames < 0.4 * doc.format.sampleRate)
    return `the audio is ${fmt(frames / doc.format.sampleRate, 3)} s long, shorter than one 400 ms gating block`;
  if (doc.summary.samplePeakDbfs === null) return 'the file is digital silence throughout';
  return 'no 400 ms block is above the -70 LUFS absolute gate';
}

/**
 * The dialogue anchor's choice: the dialogue reading and the limits that then apply when speech
 * fills enough of the programme, else null (the programme loudness is judged).
 */
function anchorOf(
  rule: IntegratedLoudnessRule,
  doc: AnalysisDocument,
): { value: number; rule: IntegratedLoudnessRule } | null {
  const anchor = rule.dialogueAnchor;
  if (!anchor || whyNoDialogue(doc, anchor.minSpeechSharePercent) !== null) return null;
  const value = doc.dialogue.dialogueLufs;
  if (value === null) return null;
  const { minSpeechSharePercent: _share, ...limits } = anchor;
  return { value, rule: { ...rule, ...limits } };
}

function check(rule: IntegratedLoudnessRule, doc: AnalysisDocument): Draft {
  const anchored = anchorOf(rule, doc);
  const anchor = rule.dialogueAnchor;
  if (anchored) {
    const share = `speech in ${fmt(doc.dialogue.speechSharePercent ?? 0)} % of the programme, at least ${anchor?.minSpeechSharePercent} %`;
    const draft = judge(anchored.rule, anchored.value, 'Dialogue loudness', doc);
    return { ...draft, explanation: `${draft.explanation}; anchored on dialogue (${share})` };
  }
  const draft = judge(rule, doc.summary.integratedLufs, 'Integrated loudness', doc);
  if (!anchor) return draft;
  const why = whyNoDialogue(doc, anchor.minSpeechSharePercent) ?? 'no dialogue reading';
  return { ...draft, explanation: `${draft.explanation}; anchored on the programme (${why})` };
}

/** Of two renderings of one value, the one with more decimals. */
const decimalsOf = (text: string): number => text.split('.')[1]?.length ?? 0;
const widest = (a: string, b: string): string => (decimalsOf(b) > decimalsOf(a) ? b : a);
/** A limit computed from the profile's figures (target ± tolerance), without float noise. */
const limitText = (value: number): string => fmtLimit(Number(value.toFixed(6)));

function judge(rule: IntegratedLoudnessRule, value: number | null, what: string, doc: AnalysisDocument): Draft {
  const { targetLufs, toleranceLu } = rule;
  const limit: CheckLimit =
    targetLufs !== undefined && toleranceLu !== undefined
      ? { targetLufs, toleranceLu }
      : {
          ...(rule.minLufs !== undefined ? { min: rule.minLufs } : {}),
          ...(rule.maxLufs !== undefined ? { max: rule.maxLufs } : {}),
          ...(targetLufs !== undefined ? { targetLufs } : {}),
        };
  if (value === null) return notMeasurable(what, 'LUFS', limit, whyNoLoudness(doc), false);
  if (targetLufs === undefined || toleranceLu === undefined)
    return { ...within(what, value, rule.minLufs, rule.maxLufs, 'LUFS', 'LU'), limit };
  const measurementTolerance = rule.measurementToleranceLu ?? 0;
  const deviation = value - targetLufs;
  const gap = Math.abs(deviation);
  const passed = gap <= toleranceLu;
  const marginal = !passed && gap <= toleranceLu + measurementTolerance;
  const side = deviation > 0 ? 'above' : 'below';
  // Distances too read against both edges: a marginal 1.19 LU is not "1.2" of a ±0.2 LU margin.
  const gapText = widest(fmtAgainst(gap, toleranceLu), fmtAgainst(gap, toleranceLu + measurementTolerance));
  const tol = `tolerance ±${fmt(toleranceLu)} LU${measurementTolerance > 0 ? `, measurement tolerance ±${fmt(measurementTolerance)} LU` : ''}`;
  // The tolerance applies to the measured value as it is (common practice), so the value shows
  // enough decimals that it never reads as on the edge it is past (-21.96, not -22.0).
  const sign = deviation > 0 ? 1 : -1;
  const edge = targetLufs + sign * toleranceLu;
  const shown = widest(fmtAgainst(value, edge), fmtAgainst(value, edge + sign * measurementTolerance));
  const pastText = widest(fmtGap(gap - toleranceLu), fmtAgainst(gap - toleranceLu, measurementTolerance));
  const past = passed
    ? ''
    : `, ${pastText} LU ${side} the ${sign > 0 ? 'upper' : 'lower'} limit ${limitText(edge)} LUFS`;
  let explanation =
    passed && fmt(gap) === '0.0'
      ? `${what} ${shown} LUFS is on the ${fmtLimit(targetLufs)} LUFS target (${tol})`
      : `${what} ${shown} LUFS is ${gapText} LU ${side} the ${fmtLimit(targetLufs)} LUFS target${past} (${tol})`;
  if (marginal) explanation += ': outside the tolerance but inside the measurement tolerance, so a warning';
  if (measurementTolerance > 0) limit.measurementToleranceLu = measurementTolerance;
  return {
    measured: value,
    unit: 'LUFS',
    limit,
    outcome: marginal ? 'marginal' : verdictOf(passed),
    passed,
    explanation,
    ...(marginal ? { severity: 'warn' as const } : {}),
  };
}

/** A target with its tolerance, or a range: one of the two, and a target inside the range. */
function issues(rule: IntegratedLoudnessRule, at: string): ProfileIssue[] {
  const out: ProfileIssue[] = [];
  const range = rule.minLufs !== undefined || rule.maxLufs !== undefined;
  if (!range && rule.toleranceLu === undefined)
    out.push({
      field: `${at}.toleranceLu`,
      message: `${at}.toleranceLu is missing: give targetLufs with toleranceLu, or minLufs/maxLufs`,
    });
  if (range && rule.toleranceLu !== undefined)
    out.push({
      field: `${at}.toleranceLu`,
      message: `${at}.toleranceLu cannot be combined with minLufs/maxLufs; use one`,
    });
  out.push(...orderIssues(at, 'minLufs', 'maxLufs', rule.minLufs, rule.maxLufs));
  const anchor = rule.dialogueAnchor;
  if (anchor && !range && (anchor.minLufs !== undefined || anchor.maxLufs !== undefined))
    out.push({
      field: `${at}.dialogueAnchor`,
      message: `${at}.dialogueAnchor takes toleranceLu here, as the rule gives a target with a tolerance`,
    });
  if (anchor && range && anchor.toleranceLu !== undefined)
    out.push({
      field: `${at}.dialogueAnchor.toleranceLu`,
      message: `${at}.dialogueAnchor takes minLufs/maxLufs here, as the rule gives a range`,
    });
  if (anchor) out.push(...orderIssues(`${at}.dialogueAnchor`, 'minLufs', 'maxLufs', anchor.minLufs, anchor.maxLufs));
  if (
    range &&
    rule.targetLufs !== undefined &&
    ((rule.minLufs ?? -Infinity) > rule.targetLufs || (rule.maxLufs ?? Infinity) < rule.targetLufs)
  ) {
    out.push({ field: `${at}.targetLufs`, message: `${at}.targetLufs lies outside minLufs..maxLufs` });
  }
  return out;
}

export const integratedLoudness: RuleSpec<IntegratedLoudnessRule> = {
  check,
  issues,
  analysis: (rules, options) => {
    for (const rule of rules) if (rule.dialogueAnchor) askForSpeech(options, rule.dialogueAnchor.minSpeechSharePercent);
  },
};
