// Declared against measured: each loudness figure a file's metadata states (bext v2, iXML) beside
// the reading of the same quantity, for the document, the rule and the report page.
import { DECLARED_LOUDNESS_FIELDS, type DeclaredLoudnessField } from '../decode/declared-loudness.ts';
import type { DeclaredLoudness, DeclaredLoudnessSource } from '../decode/types.ts';
import type { AnalysisDocument } from './document.ts';

export type { DeclaredLoudnessField } from '../decode/declared-loudness.ts';

export interface DeclaredLoudnessRow {
  field: DeclaredLoudnessField;
  unit: 'LUFS' | 'LU' | 'dBTP';
  declared: number;
  /** Our reading of the same quantity; null when not measurable (silence, too short). */
  measured: number | null;
  /** measured - declared, in LU (dB for true peak); null when nothing is measured. */
  measuredMinusDeclared: number | null;
}

export interface DeclaredLoudnessComparison {
  source: DeclaredLoudnessSource;
  /** Only the fields the source sets. */
  rows: DeclaredLoudnessRow[];
}

export const DECLARED_FIELD_UNITS: Record<DeclaredLoudnessField, DeclaredLoudnessRow['unit']> = {
  integratedLufs: 'LUFS',
  loudnessRangeLu: 'LU',
  maxTruePeakDbtp: 'dBTP',
  maxMomentaryLufs: 'LUFS',
  maxShortTermLufs: 'LUFS',
};

/** Words for each field, as printed in checks, flags and the page. */
export const DECLARED_FIELD_TITLES: Record<DeclaredLoudnessField, string> = {
  integratedLufs: 'Integrated loudness',
  loudnessRangeLu: 'Loudness range',
  maxTruePeakDbtp: 'Max true peak',
  maxMomentaryLufs: 'Max momentary loudness',
  maxShortTermLufs: 'Max short-term loudness',
};

/** The reading each declared field is compared with (true peak: the BS.1770 Annex 2 reading). */
export function measuredFor(field: DeclaredLoudnessField, summary: AnalysisDocument['summary']): number | null {
  switch (field) {
    case 'integratedLufs':
      return summary.integratedLufs;
    case 'loudnessRangeLu':
      return summary.loudnessRangeLu;
    case 'maxTruePeakDbtp':
      return summary.truePeakDbtp;
    case 'maxMomentaryLufs':
      return summary.maxMomentaryLufs;
    case 'maxShortTermLufs':
      return summary.maxShortTermLufs;
  }
}

export function compareDeclaredLoudness(
  declared: readonly DeclaredLoudness[],
  summary: AnalysisDocument['summary'],
): DeclaredLoudnessComparison[] {
  return declared.map((d) => ({
    source: d.source,
    rows: DECLARED_LOUDNESS_FIELDS.flatMap((field): DeclaredLoudnessRow[] => {
      const value = d[field];
      if (value === null) return [];
      const measured = measuredFor(field, summary);
      return [
        {
          field,
          unit: DECLARED_FIELD_UNITS[field],
          declared: value,
          measured,
          measuredMinusDeclared: measured === null ? null : measured - value,
        },
      ];
    }),
  }));
}
