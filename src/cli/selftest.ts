// `earmark selftest`: measures the EBU Tech 3341 / 3342 signals with this installation's meters.
import { complianceCases, runComplianceCase } from '../selftest/cases.ts';
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
    for (const o of outcomes) {
      const t = o.testCase;
      const tolerance =
        t.toleranceBelow === t.toleranceAbove ? `±${t.toleranceAbove}` : `+${t.toleranceAbove}/-${t.toleranceBelow}`;
      io.stdout(
        `${o.passed ? 'pass' : 'FAIL'}  ${t.id.padEnd(10)} ${t.reading.padEnd(16)} ${o.measured === null ? 'n/a' : o.measured.toFixed(2).padStart(7)}  expected ${String(t.expected).padStart(4)} ${tolerance.padEnd(9)} ${t.description}\n`,
      );
    }
    io.stdout(`${outcomes.length - failed}/${outcomes.length} cases within tolerance\n`);
  }
  return failed === 0 ? 0 : 1;
}
