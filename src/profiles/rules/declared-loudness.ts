// Declared against measured: every loudness figure the file's metadata states (bext v2, iXML)
// must lie within a tolerance of our reading of the same quantity. No standard sets these
// tolerances; the defaults are our choice (see types.ts).
import {
  DECLARED_FIELD_TITLES,
  type DeclaredLoudnessField,
  type DeclaredLoudnessRow,
} from '../../engine/declared-loudness.ts';
import type { AnalysisDocument } from '../../engine/document.ts';
import { fmt, fmtGap } from '../format.ts';
import type { DeclaredLoudnessRule } from '../types.ts';
import { notMeasurable, verdictOf } from './drafts.ts';
import type { Draft, RuleSpec } from './rule-spec.ts';

export const DEFAULT_DECLARED_TOLERANCES: Record<DeclaredLoudnessField, number> = {
  integratedLufs: 0.2, // EBU R 128 item i (QC measurement tolerance), our reading
  loudnessRangeLu: 1, // EBU Tech 3342 Table 1 meter tolerance, our choice
  maxTruePeakDbtp: 0.4, // EBU Tech 3341 Table 1 true peak +0.2/-0.4 dB, the wider side, our choice
  maxMomentaryLufs: 0.2, // our choice
  maxShortTermLufs: 0.2, // our choice
};

export function declaredTolerance(rule: DeclaredLoudnessRule | undefined, field: DeclaredLoudnessField): number {
  const own: Record<DeclaredLoudnessField, number | undefined> = {
    integratedLufs: rule?.integratedToleranceLu,
    loudnessRangeLu: rule?.loudnessRangeToleranceLu,
    maxTruePeakDbtp: rule?.truePeakToleranceDb,
    maxMomentaryLufs: rule?.maxMomentaryToleranceLu,
    maxShortTermLufs: rule?.maxShortTermToleranceLu,
  };
  return own[field] ?? DEFAULT_DECLARED_TOLERANCES[field];
}

export interface DeclaredMismatch {
  source: AnalysisDocument['declaredLoudness'][number]['source'];
  row: DeclaredLoudnessRow;
  toleranceUnits: number;
  /** How far past the tolerance the gap is (> 0). */
  excess: number;
}

/** Declared figures further from their reading than the tolerance; rows with no reading are not judged. */
export function declaredMismatches(doc: AnalysisDocument, rule?: DeclaredLoudnessRule): DeclaredMismatch[] {
  return doc.declaredLoudness.flatMap(({ source, rows }) =>
    rows.flatMap((row): DeclaredMismatch[] => {
      if (row.measuredMinusDeclared === null) return [];
      const toleranceUnits = declaredTolerance(rule, row.field);
      // Rounded to a millionth: a gap of exactly the tolerance (bext stores hundredths) must not fail on float noise.
      const gap = Math.round(Math.abs(row.measuredMinusDeclared) * 1e6) / 1e6;
      return gap > toleranceUnits ? [{ source, row, toleranceUnits, excess: gap - toleranceUnits }] : [];
    }),
  );
}

const gapUnit = (row: DeclaredLoudnessRow) => (row.unit === 'dBTP' ? 'dB' : 'LU');
const sourceName = (source: DeclaredMismatch['source']) => (source === 'bext' ? 'bext' : 'iXML');

/** "bext integrated loudness declares -23.00 LUFS, measured -20.0 LUFS: 3.0 LU apart (tolerance ±0.2 LU)". */
export function mismatchText(m: DeclaredMismatch): string {
  const { row } = m;
  const unit = gapUnit(row);
  return `${sourceName(m.source)} ${DECLARED_FIELD_TITLES[row.field].toLowerCase()} declares ${fmt(row.declared, 2)} ${row.unit}, measured ${fmt(row.measured ?? Number.NaN)} ${row.unit}: ${fmtGap(Math.abs(row.measuredMinusDeclared ?? 0))} ${unit} apart (tolerance ±${fmt(m.toleranceUnits)} ${unit})`;
}

function check(rule: DeclaredLoudnessRule, doc: AnalysisDocument): Draft {
  const rows = doc.declaredLoudness.flatMap((d) => d.rows);
  const required = rule.requireDeclared === true;
  if (rows.length === 0) {
    if (!required)
      return notMeasurable('Declared loudness', 'LUFS', {}, 'the file declares no loudness in bext v2 or iXML', true);
    return {
      measured: null,
      unit: null,
      limit: {},
      outcome: 'fail',
      passed: false,
      explanation:
        'The file declares no loudness (no bext version 2 loudness field, no iXML LOUDNESS block), and this rule requires it',
    };
  }
  const mismatches = declaredMismatches(doc, rule).sort((a, b) => b.excess - a.excess);
  const worst = mismatches[0];
  const judged = rows.filter((r) => r.measured !== null).length;
  const sources = doc.declaredLoudness.map((d) => sourceName(d.source)).join(' and ');
  if (judged === 0)
    return notMeasurable('Declared loudness', 'LUFS', {}, `no reading to compare the ${sources} figures with`, true);
  if (!worst) {
    return {
      measured: judged,
      unit: 'figures',
      limit: {},
      outcome: verdictOf(true),
      passed: true,
      explanation: `${judged} declared figure${judged === 1 ? '' : 's'} (${sources}) match${judged === 1 ? 'es' : ''} the readings within tolerance${judged < rows.length ? `; ${rows.length - judged} had no reading to compare` : ''}`,
    };
  }
  const { row } = worst;
  return {
    measured: row.measured,
    unit: row.unit,
    limit: { min: row.declared - worst.toleranceUnits, max: row.declared + worst.toleranceUnits },
    outcome: verdictOf(false),
    passed: false,
    explanation: `${mismatches.length} declared figure${mismatches.length === 1 ? '' : 's'} of ${rows.length} differ${mismatches.length === 1 ? 's' : ''} from the readings: ${mismatches.map(mismatchText).join('; ')}`,
  };
}

export const declaredLoudness: RuleSpec<DeclaredLoudnessRule> = { check };
