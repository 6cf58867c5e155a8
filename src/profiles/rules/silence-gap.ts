// Longest all-channel silence inside the programme. Silence events are only needed for gaps longer
// than the shortest allowed gap, so that sets the detector's minimum duration. With a line-up
// head or tail (head.ts lineUpSpans) its silences are not programme: the longest gap then comes
// from the events outside it.
import type { AnalysisDocument } from '../../engine/document.ts';
import { inLineUp, lineUpSpans } from '../head.ts';
import type { SilenceGapRule } from '../types.ts';
import { within } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';
import { applySilenceThreshold, silenceThresholdSetting } from './silence-threshold.ts';

/** The longest internal all-channel silence outside the line-up; the meter's figure without one,
 * or when the event list was cut (never shorter than what was found). */
function longestGapSeconds(doc: AnalysisDocument): number {
  const { headEndSample, tailStartSample } = lineUpSpans(doc);
  if ((headEndSample === null && tailStartSample === null) || doc.eventsTruncated)
    return doc.summary.longestInternalGapSeconds;
  const gaps = doc.events.filter(
    (e) =>
      e.kind === 'silence' &&
      e.channel === null &&
      e.startFrame > 0 &&
      e.endFrame < doc.format.framesDecoded &&
      !inLineUp(doc, e),
  );
  return Math.max(0, ...gaps.map((e) => e.endSeconds - e.startSeconds));
}

export const silenceGap: RuleSpec<SilenceGapRule> = {
  check: (rule, doc) =>
    within('Longest silence inside the programme', longestGapSeconds(doc), undefined, rule.maxSeconds, 's', 's'),
  settings: (rule, at) => silenceThresholdSetting(rule.thresholdDbfs, at),
  analysis: (rules, options) => {
    applySilenceThreshold(
      rules.map((r) => r.thresholdDbfs),
      options,
    );
    options.silence = { ...options.silence, minDurationSeconds: Math.min(...rules.map((r) => r.maxSeconds)) };
  },
  // Flags judge the programme's own silences (not a channel's) against this rule: see flags.ts.
  breaks: (rule, e, doc) => !inLineUp(doc, e) && e.endFrame - e.startFrame > rule.maxSeconds * doc.format.sampleRate,
};
