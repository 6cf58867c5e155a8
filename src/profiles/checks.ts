// One check per rule, by its type's entry in the rule registry (rules/index.ts). Policy for missing
// measurements (documented in README.md): integrated loudness that cannot be measured fails its rule
// (a delivery must have a measurable programme); every other rule passes with a "not measurable" note
// (no short-term max in a 2 s file is not a breach).

import type { AnalysisDocument } from '../engine/document.ts';
import type { CheckResult } from './report.ts';
import { FRAME_RATES, type FrameRate } from './timecode.ts';
import { ruleSpec } from './rules/index.ts';
import { integrityDraft } from './rules/integrity.ts';
import type { IntegrityRule, Profile, Rule } from './types.ts';

export { whyNoLoudness } from './rules/integrated-loudness.ts';

/** The file itself: always checked, fail unless the profile lowers it to warn. */
export function integrityCheck(profile: Profile, doc: AnalysisDocument): CheckResult {
  const rule = profile.rules.find((r): r is IntegrityRule => r.type === 'integrity');
  if (rule) return runCheck(rule, doc);
  const taken = profile.rules.some((r) => r.id === 'integrity');
  return {
    ruleId: taken ? 'file-integrity' : 'integrity',
    type: 'integrity',
    severity: 'fail',
    source: 'every profile: the file must be complete and readable',
    ...integrityDraft(doc),
  };
}

/** `frameRate`: the report's (timecode limits); 25 fps when not given. */
export function runCheck(rule: Rule, doc: AnalysisDocument, frameRate: FrameRate = FRAME_RATES['25']): CheckResult {
  const { severity, ...draft } = ruleSpec(rule).check(rule, doc, { frameRate });
  return {
    ruleId: rule.id,
    type: rule.type,
    severity: severity ?? rule.severity,
    source: rule.source ?? null,
    ...draft,
  };
}
