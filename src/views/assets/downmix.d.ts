// Types of downmix.js for the tests; the browser loads the .js alone.
import type { QcReport } from '../../profiles/index.ts';

export function downmixRows(downmix: QcReport['downmix'] | undefined): [string, string][];
export function channelLoudnessRows(report: {
  downmix: QcReport['downmix'];
  channels: readonly { label: string }[];
}): [string, string][];
export function renderDownmix(report: QcReport): void;
