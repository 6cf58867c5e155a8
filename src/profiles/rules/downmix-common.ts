// What the fold-down rules share: turning the readings on, and why a file has no reading.
import type { AnalysisOptions } from '../../analysis/runner.ts';
import type { AnalysisDocument } from '../../engine/document.ts';
import type { CheckLimit } from '../report.ts';
import { notMeasurable } from './drafts.ts';
import type { Draft } from './rule-spec.ts';

/** Any downmix or mono rule asks for the fold-down readings (off by default: they cost K-weighting passes). */
export function askForDownmix(options: AnalysisOptions): void {
  options.downmix = { ...options.downmix, enabled: true };
}

/** The Lo/Ro readings, or the not-applied check of a file that has none. */
export function loRoOf(
  doc: AnalysisDocument,
  what: string,
  unit: string,
  limit: CheckLimit,
): NonNullable<AnalysisDocument['downmix']['loRo']> | Draft {
  if (doc.downmix.loRo) return doc.downmix.loRo;
  const why = !doc.downmix.measured
    ? 'the analysis did not measure the downmix'
    : `the file has no Lo/Ro downmix: ${doc.downmix.note ?? 'it is stereo'}`;
  return notMeasurable(what, unit, limit, why, doc.downmix.measured);
}
