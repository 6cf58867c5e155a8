// The silence detector's threshold, shared by the silence-gap, head-silence and tail-silence rules:
// one analysis runs with one value, so every rule giving it must agree.
import type { AnalysisOptions } from '../../analysis/runner.ts';
import type { SettingUse } from './rule-spec.ts';

export const silenceThresholdSetting = (value: number | undefined, at: string): SettingUse[] => [
  { setting: 'silenceThreshold', field: `${at}.thresholdDbfs`, value },
];

/** parseProfile guarantees the rules agree: the first value given is everyone's. */
export function applySilenceThreshold(thresholds: Array<number | undefined>, options: AnalysisOptions): void {
  const thresholdDbfs = thresholds.find((t) => t !== undefined);
  if (thresholdDbfs !== undefined) options.silence = { ...options.silence, thresholdDbfs };
}
