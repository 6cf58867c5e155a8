// Analysis settings a profile needs, so the engine's events line up with the profile's limits:
// the true-peak ceiling and loudness limits become event thresholds, clipping and silence
// parameters become detector settings. Each rule type says its part (rules/*.ts); several rules
// of one kind: the strictest limit wins.

import type { AnalysisOptions } from '../analysis/runner.ts';
import type { DecodeOptions } from '../decode/types.ts';
import { RULE_TYPES, ruleSpec } from './rules/index.ts';
import type { Profile } from './types.ts';

export function analysisOptionsForProfile(profile: Profile): AnalysisOptions {
  const options: AnalysisOptions = {};
  for (const type of RULE_TYPES) {
    const rules = profile.rules.filter((r) => r.type === type);
    if (rules.length > 0) ruleSpec(rules[0]).analysis?.(rules, options);
  }
  return options;
}

/** Decode settings a profile needs: the layout of files that do not name their channels. */
export function decodeOptionsForProfile(profile: Profile): Pick<DecodeOptions, 'layout'> {
  return profile.layout ? { layout: profile.layout } : {};
}
