// Silence before the first and after the last signal: minSeconds (a required lead-in) and/or maxSeconds.
// With a line-up tone the head counts back from the programme start to the tone's end (profiles/head.ts).
import type { AnalysisDocument } from '../../engine/document.ts';
import { headSilenceOf } from '../head.ts';
import type { EdgeSilenceRule } from '../types.ts';
import { within } from './drafts.ts';
import { rangeIssues } from './issues.ts';
import type { RuleSpec } from './rule-spec.ts';
import { applySilenceThreshold, silenceThresholdSetting } from './silence-threshold.ts';

function edge(what: string, seconds: (doc: AnalysisDocument) => number): RuleSpec<EdgeSilenceRule> {
  return {
    check: (rule, doc) => within(what, seconds(doc), rule.minSeconds, rule.maxSeconds, 's', 's'),
    issues: (rule, at) => rangeIssues(at, 'minSeconds', 'maxSeconds', rule.minSeconds, rule.maxSeconds),
    settings: (rule, at) => silenceThresholdSetting(rule.thresholdDbfs, at),
    analysis: (rules, options) =>
      applySilenceThreshold(
        rules.map((r) => r.thresholdDbfs),
        options,
      ),
  };
}

export const headSilence = edge('Silence before the programme', (doc) => headSilenceOf(doc).seconds);
export const tailSilence = edge('Silence after the programme', (doc) => doc.summary.tailSilenceSeconds);
