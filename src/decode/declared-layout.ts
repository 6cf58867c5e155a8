// A declared layout (CLI --layout, profile `layout`) names the channels of a file that does not:
// no WAVE channel mask, no chna chunk. A file that names its own keeps them.

import { LAYOUTS, type LayoutName } from '../analysis/layouts.ts';
import { EarmarkError } from '../errors/index.ts';
import type { DecodedAudio } from './types.ts';

export function applyDeclaredLayout(audio: DecodedAudio, layout: LayoutName | undefined): DecodedAudio {
  if (layout === undefined) return audio;
  const { format } = audio;
  const labels = LAYOUTS[layout];
  if (format.layoutFrom !== undefined) {
    const same = labels.length === format.channelLabels.length && labels.every((l, i) => format.channelLabels[i] === l);
    if (!same) {
      const source = format.layoutFrom === 'chna' ? 'chna chunk' : 'channel mask';
      audio.warnings.push({
        code: 'declared_layout_unused',
        message: `declared layout ${layout} not used: the file's ${source} gives ${format.channelLabels.join(' ')}`,
      });
    }
    return audio;
  }
  if (labels.length !== format.channels) {
    throw new EarmarkError(
      'layout_mismatch',
      `declared layout ${layout} has ${labels.length} channels, the file has ${format.channels}`,
      { field: 'layout' },
    );
  }
  format.channelLabels = [...labels];
  format.layoutFrom = 'declared';
  return audio;
}
