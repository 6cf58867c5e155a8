// Declared loudness that does not match the reading: one whole-file flag per figure, judged by the
// profile's declared-loudness rule (its tolerances), or a remark at the default tolerances.
import type { AnalysisDocument } from '../engine/document.ts';
import type { CheckResult } from './report.ts';
import { declaredMismatches, mismatchText } from './rules/declared-loudness.ts';
import type { DeclaredLoudnessRule, Profile } from './types.ts';
import type { FlagDraft } from './flags.ts';

export function declaredLoudnessDrafts(
  profile: Profile,
  doc: AnalysisDocument,
  checks: Map<string, CheckResult>,
): FlagDraft[] {
  const rules = profile.rules.filter((r): r is DeclaredLoudnessRule => r.type === 'declared-loudness');
  // The strictest broken rule judges; a met rule's tolerances make the finding a remark; none: defaults.
  const broken = rules
    .map((rule) => ({ rule, check: checks.get(rule.id) }))
    .filter((c) => c.check !== undefined && !c.check.passed)
    .sort((a, b) => (a.check?.severity === 'fail' ? 0 : 1) - (b.check?.severity === 'fail' ? 0 : 1));
  const judge = broken[0] ?? (rules[0] ? { rule: rules[0], check: undefined } : undefined);
  const severity = judge?.check && !judge.check.passed ? judge.check.severity : 'remark';
  return declaredMismatches(doc, judge?.rule).map((m) => ({
    kind: 'declared_loudness_mismatch',
    ruleId: judge?.rule.id ?? null,
    severity,
    channel: null,
    startSample: 0,
    endSample: doc.format.framesDecoded,
    // Measured minus declared, in the figure's own gap unit.
    worstValue: m.row.measuredMinusDeclared,
    unit: m.row.unit === 'dBTP' ? 'dB' : 'LU',
    count: 1,
    detections: 1,
    message: `Declared loudness differs: ${mismatchText(m)}`,
  }));
}
