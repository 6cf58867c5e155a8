// The file itself: cut short, unreadable data, non-finite samples, no audio. Every profile checks
// it (checks.ts integrityCheck); naming the rule only lowers it to warn.
import type { AnalysisDocument } from '../../engine/document.ts';
import type { IntegrityRule } from '../types.ts';
import { verdictOf } from './drafts.ts';
import type { Draft, RuleSpec } from './rule-spec.ts';

export function integrityDraft(doc: AnalysisDocument): Draft {
  const problems = doc.integrity.problems;
  const passed = problems.length === 0;
  return {
    measured: problems.map((p) => p.code),
    unit: null,
    limit: { max: 0 },
    outcome: verdictOf(passed),
    passed,
    explanation: passed ? 'The file is complete and readable' : problems.map((p) => p.message).join('; '),
  };
}

export const integrity: RuleSpec<IntegrityRule> = { check: (_rule, doc) => integrityDraft(doc) };
