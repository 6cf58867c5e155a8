// Windows of strongly negative inter-channel correlation; the correlation limit is the analysis's
// phase threshold, so every phase rule of a profile must give the same one.
import { fmt } from '../format.ts';
import type { PhaseRule } from '../types.ts';
import { count } from './drafts.ts';
import type { RuleSpec } from './rule-spec.ts';

export const phase: RuleSpec<PhaseRule> = {
  check: (rule, doc) => {
    const windows = doc.channelPairs.reduce((n, p) => n + p.phaseProblemWindows, 0);
    const lows = doc.channelPairs.map((p) => p.minWindowCorrelation).filter((r): r is number => r !== null);
    const detail = lows.length > 0 ? ` (lowest window correlation ${fmt(Math.min(...lows), 2)})` : '';
    return count(
      windows === 1 ? 'window of strongly negative correlation' : 'windows of strongly negative correlation',
      windows,
      rule.maxWindows ?? 0,
      'windows',
      detail,
    );
  },
  settings: (rule, at) => [{ setting: 'phase', field: `${at}.minCorrelation`, value: rule.minCorrelation }],
  analysis: (rules, options) => {
    const phaseThreshold = rules.find((r) => r.minCorrelation !== undefined)?.minCorrelation;
    if (phaseThreshold !== undefined) options.channelRelations = { phaseThreshold };
  },
  events: ['phase_problem'],
};
