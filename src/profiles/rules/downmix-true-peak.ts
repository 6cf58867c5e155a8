// Maximum true peak (BS.1770-5 Annex 2) of the Lo/Ro downmix: a fold-down adds the centre and
// surrounds into each side, so it can peak over a ceiling the discrete channels meet.
import type { DownmixTruePeakRule } from '../types.ts';
import { atMost } from './drafts.ts';
import { askForDownmix, loRoOf } from './downmix-common.ts';
import type { RuleSpec } from './rule-spec.ts';

const WHAT = 'Downmix (Lo/Ro) true peak';

export const downmixTruePeak: RuleSpec<DownmixTruePeakRule> = {
  check: (rule, doc) => {
    const loRo = loRoOf(doc, WHAT, 'dBTP', { max: rule.maxDbtp });
    if ('explanation' in loRo) return loRo;
    return atMost(WHAT, loRo.truePeakDbtp, rule.maxDbtp, 'dBTP', 'digital silence');
  },
  analysis: (_rules, options) => askForDownmix(options),
};
