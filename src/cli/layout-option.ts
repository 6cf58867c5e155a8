// --layout (analyze, check): the channel layout of a file that does not name its channels.
import { isLayoutName, LAYOUT_NAMES, type LayoutName } from '../analysis/layouts.ts';
import { EarmarkError } from '../errors/index.ts';

/** --layout: one of the named layouts (analysis/layouts.ts). */
export function layoutOption(values: Record<string, unknown>): LayoutName | undefined {
  const raw = values.layout;
  if (raw === undefined) return undefined;
  if (typeof raw !== 'string' || !isLayoutName(raw)) {
    throw new EarmarkError(
      'invalid_argument',
      `--layout must be one of ${LAYOUT_NAMES.join(', ')}; got "${String(raw)}"`,
      {
        field: 'layout',
      },
    );
  }
  return raw;
}
