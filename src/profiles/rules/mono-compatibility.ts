// Stereo only: how much quieter the mono sum L + R is than the stereo programme (BS.1770
// integrated loudness of each). A sum that cancels below the absolute gate fails outright.
import type { AnalysisDocument } from '../../engine/document.ts';
import { fmt, fmtAgainst, fmtLimit } from '../format.ts';
import type { MonoCompatibilityRule } from '../types.ts';
import { notMeasurable, verdictOf } from './drafts.ts';
import { askForDownmix } from './downmix-common.ts';
import type { Draft, RuleSpec } from './rule-spec.ts';

const WHAT = 'Mono compatibility loss (L + R against stereo)';

function check(rule: MonoCompatibilityRule, doc: AnalysisDocument): Draft {
  const limit = { max: rule.maxLossLu };
  const mono = doc.downmix.mono;
  if (!mono) {
    const why = doc.downmix.measured ? 'the file is not L/R stereo' : 'the analysis did not measure the mono sum';
    return notMeasurable(WHAT, 'LU', limit, why, doc.downmix.measured);
  }
  if (mono.cancels)
    return {
      measured: null,
      unit: 'LU',
      limit,
      outcome: 'fail',
      passed: false,
      explanation: `The mono sum L + R cancels below the -70 LUFS absolute gate while the stereo reads ${fmt(doc.summary.integratedLufs ?? 0)} LUFS: R is (nearly) L inverted`,
    };
  const loss = mono.compatibilityLossLu;
  if (loss === null) return notMeasurable(WHAT, 'LU', limit, 'the stereo programme has no integrated loudness');
  const passed = loss <= rule.maxLossLu;
  const explanation = passed
    ? `${WHAT} ${fmtAgainst(loss, rule.maxLossLu)} LU is within the ${fmtLimit(rule.maxLossLu)} LU maximum (mono ${fmt(mono.integratedLufs ?? 0)} LUFS)`
    : `${WHAT} ${fmtAgainst(loss, rule.maxLossLu)} LU is over the ${fmtLimit(rule.maxLossLu)} LU maximum (mono ${fmt(mono.integratedLufs ?? 0)} LUFS)`;
  return { measured: loss, unit: 'LU', limit, outcome: verdictOf(passed), passed, explanation };
}

export const monoCompatibility: RuleSpec<MonoCompatibilityRule> = {
  check,
  analysis: (_rules, options) => askForDownmix(options),
};
