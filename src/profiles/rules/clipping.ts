// Clipping runs; the run length and threshold are the clipping detector's settings, so every
// clipping rule of a profile must give the same ones.
import { fmt } from '../format.ts';
import { DEFAULT_MAX_CLIP_RUNS, type ClippingRule } from '../types.ts';
import { count } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const clipping: RuleSpec<ClippingRule> = {
  check: (rule, doc) => {
    const runs = doc.summary.clippingRuns;
    const { minRunSamples, thresholdDbfs } = doc.settings.clipping;
    return count(
      runs === 1 ? 'clipping run' : 'clipping runs',
      runs,
      rule.maxRuns ?? DEFAULT_MAX_CLIP_RUNS,
      'runs',
      ` of ${minRunSamples}+ samples at or above ${fmt(thresholdDbfs, 2)} dBFS`,
    );
  },
  settings: (rule, at) => [
    { setting: 'clipRun', field: `${at}.minRunSamples`, value: rule.minRunSamples },
    { setting: 'clipThreshold', field: `${at}.thresholdDbfs`, value: rule.thresholdDbfs },
  ],
  // parseProfile guarantees the rules agree: the first value given is everyone's.
  analysis: (rules, options) => {
    const minRun = rules.find((r) => r.minRunSamples !== undefined)?.minRunSamples;
    const threshold = rules.find((r) => r.thresholdDbfs !== undefined)?.thresholdDbfs;
    if (minRun !== undefined || threshold !== undefined) {
      options.clipping = {
        ...(minRun !== undefined ? { minRunSamples: minRun } : {}),
        ...(threshold !== undefined ? { thresholdDbfs: threshold } : {}),
      };
    }
  },
  events: ['clipping'],
};
