// Analysis settings a profile needs, so the engine's events line up with the profile's limits:
// the true-peak ceiling and loudness limits become event thresholds, clipping and silence
// parameters become detector settings. Several rules of one kind: the strictest limit wins.

import type { AnalysisOptions } from '../analysis/runner.ts';
import type { Profile, Rule, RuleType } from './types.ts';

const rulesOf = <T extends RuleType>(profile: Profile, ...types: T[]) =>
  profile.rules.filter((r): r is Extract<Rule, { type: T }> => (types as RuleType[]).includes(r.type));

const lowest = (values: number[]) => (values.length > 0 ? Math.min(...values) : undefined);

export function analysisOptionsForProfile(profile: Profile): AnalysisOptions {
  const options: AnalysisOptions = {};
  const ceiling = lowest(rulesOf(profile, 'true-peak').map((r) => r.maxDbtp));
  if (ceiling !== undefined) {
    options.truePeak = { overCeilingDbtp: ceiling };
    options.reconstructedPeak = { overCeilingDbtp: ceiling };
  }
  const shortTerm = lowest(rulesOf(profile, 'short-term-max').map((r) => r.maxLufs));
  const momentary = lowest(rulesOf(profile, 'momentary-max').map((r) => r.maxLufs));
  if (shortTerm !== undefined || momentary !== undefined) {
    options.loudness = { ...(shortTerm !== undefined ? { shortTermLimitLufs: shortTerm } : {}), ...(momentary !== undefined ? { momentaryLimitLufs: momentary } : {}) };
  }
  // parseProfile guarantees clipping rules agree on run length and threshold.
  const clipping = rulesOf(profile, 'clipping');
  const minRun = clipping.find((r) => r.minRunSamples !== undefined)?.minRunSamples;
  const clipThreshold = clipping.find((r) => r.thresholdDbfs !== undefined)?.thresholdDbfs;
  if (minRun !== undefined || clipThreshold !== undefined) {
    options.clipping = { ...(minRun !== undefined ? { minRunSamples: minRun } : {}), ...(clipThreshold !== undefined ? { thresholdDbfs: clipThreshold } : {}) };
  }
  const silence = rulesOf(profile, 'silence-gap', 'head-silence', 'tail-silence');
  const silenceThreshold = silence.find((r) => r.thresholdDbfs !== undefined)?.thresholdDbfs;
  // Silence events are only needed for gaps longer than the shortest allowed gap.
  const gap = lowest(rulesOf(profile, 'silence-gap').map((r) => r.maxSeconds));
  if (silenceThreshold !== undefined || gap !== undefined) {
    options.silence = { ...(silenceThreshold !== undefined ? { thresholdDbfs: silenceThreshold } : {}), ...(gap !== undefined ? { minDurationSeconds: gap } : {}) };
  }
  const phase = rulesOf(profile, 'phase').find((r) => r.minCorrelation !== undefined)?.minCorrelation;
  if (phase !== undefined) options.channelRelations = { phaseThreshold: phase };
  return options;
}
