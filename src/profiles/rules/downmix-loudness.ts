// Integrated loudness of the Lo/Ro downmix (ITU-R BS.775 fold-down, BS.1770 reading): a target with
// its tolerance. A downmix with no loudness (silent) fails, as the programme's own reading does.
import type { DownmixLoudnessRule } from '../types.ts';
import { notMeasurable, within } from './drafts.ts';
import { askForDownmix, loRoOf } from './downmix-common.ts';
import type { RuleSpec } from './rule-spec.ts';

const WHAT = 'Downmix (Lo/Ro) integrated loudness';

export const downmixLoudness: RuleSpec<DownmixLoudnessRule> = {
  check: (rule, doc) => {
    const limit = { targetLufs: rule.targetLufs, toleranceLu: rule.toleranceLu };
    const loRo = loRoOf(doc, WHAT, 'LUFS', limit);
    if ('explanation' in loRo) return loRo;
    if (loRo.integratedLufs === null)
      return notMeasurable(WHAT, 'LUFS', limit, 'no 400 ms block is above the -70 LUFS absolute gate', false);
    const { targetLufs: t, toleranceLu: tol } = rule;
    return { ...within(WHAT, loRo.integratedLufs, t - tol, t + tol, 'LUFS', 'LU'), limit };
  },
  analysis: (_rules, options) => askForDownmix(options),
};
