// `earmark selftest`: measures the EBU Tech 3341 / 3342 signals with this installation's meters.
import { complianceCases, runComplianceCase, type Reading } from '../selftest/cases.ts';
import type { CliIo } from './main.ts';

export function runSelftest(args: string[], io: CliIo): number {
  const json = args.includes('--json');
  const outcomes = complianceCases().map(runComplianceCase);
  const failed = outcomes.filter((o) => !o.passed).length;
  if (json) {
    io.stdout(
      `${JSON.stringify({
        passed: failed === 0,
        cases: outcomes.map((o) => ({
          id: o.testCase.id,
          source: o.testCase.source,
          description: o.testCase.description,
          reading: o.testCase.reading,
          measured: o.measured,
          expected: o.testCase.expected,
          toleranceBelow: o.testCase.toleranceBelow,
          toleranceAbove: o.testCase.toleranceAbove,
          passed: o.passed,
        })),
      })}\n`,
    );
  } else {
    for (const o of outcomes) io.stdout(`${formatSelftestLine(o)}\n`);
    io.stdout(`${outcomes.length - failed} of ${outcomes.length} cases within tolerance\n`);
  }
  return failed === 0 ? 0 : 1;
}

/** Each reading's unit, and the unit of a difference from it (a tolerance). */
const READING_UNITS: Record<Reading, { unit: string; toleranceUnit: string }> = {
  integrated: { unit: 'LUFS', toleranceUnit: 'LU' },
  maxMomentary: { unit: 'LUFS', toleranceUnit: 'LU' },
  maxShortTerm: { unit: 'LUFS', toleranceUnit: 'LU' },
  shortTermSpread: { unit: 'LUFS', toleranceUnit: 'LU' },
  momentarySpread: { unit: 'LUFS', toleranceUnit: 'LU' },
  loudnessRange: { unit: 'LU', toleranceUnit: 'LU' },
  truePeak: { unit: 'dBTP', toleranceUnit: 'dB' },
};

type Outcome = ReturnType<typeof runComplianceCase>;

export function formatSelftestLine(o: Outcome): string {
  const t = o.testCase;
  const { unit, toleranceUnit } = READING_UNITS[t.reading];
  const tolerance =
    t.toleranceBelow === t.toleranceAbove
      ? `±${t.toleranceAbove} ${toleranceUnit}`
      : `+${t.toleranceAbove}/-${t.toleranceBelow} ${toleranceUnit}`;
  const measured = o.measured === null ? 'n/a' : `${o.measured.toFixed(2)} ${unit}`;
  return `${o.passed ? 'pass' : 'FAIL'}  ${t.id.padEnd(10)} ${t.reading.padEnd(16)} ${measured.padStart(12)}  expected ${`${t.expected} ${unit}`.padStart(9)} ${tolerance.padEnd(12)} ${t.description}`;
}
