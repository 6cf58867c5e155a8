// The shapes of check a rule's verdict takes: a ceiling, a range, a count, an allowed set.
import { fmt, fmtAgainst, fmtGap, fmtLimit } from '../format.ts';
import type { CheckLimit } from '../report.ts';
import type { Draft } from './rule-spec.ts';

export const notMeasurable = (what: string, unit: string, limit: CheckLimit, why: string, passed = true): Draft => ({
  measured: null,
  unit,
  limit,
  outcome: 'not_measurable',
  passed,
  explanation: `${what} is not measurable (${why}); ${passed ? 'the rule is not applied' : 'the rule fails'}`,
});

/** The limit of a range check; either end may be absent. */
export const rangeLimit = (min: number | undefined, max: number | undefined): CheckLimit => ({
  ...(min !== undefined ? { min } : {}),
  ...(max !== undefined ? { max } : {}),
});

export const verdictOf = (passed: boolean): 'pass' | 'fail' => (passed ? 'pass' : 'fail');

/** Ceiling-type check: value <= max. */
export function atMost(what: string, value: number | null, max: number, unit: string, whyNull: string): Draft {
  const limit = { max };
  if (value === null) return notMeasurable(what, unit, limit, whyNull);
  const passed = value <= max;
  const shown = fmtAgainst(value, max);
  const explanation = passed
    ? `${what} ${shown} ${unit} is within the ${fmtLimit(max)} ${unit} maximum`
    : `${what} ${shown} ${unit} is ${fmtGap(value - max)} ${unit === 'LUFS' ? 'LU' : 'dB'} above the ${fmtLimit(max)} ${unit} maximum`;
  return { measured: value, unit, limit, outcome: verdictOf(passed), passed, explanation };
}

/** Range check with either end optional; `unitGap` names the unit of the distance (LU, s). */
export function within(
  what: string,
  value: number,
  min: number | undefined,
  max: number | undefined,
  unit: string,
  unitGap: string,
): Draft {
  const limit = rangeLimit(min, max);
  const lowBy = min !== undefined ? min - value : -Infinity;
  const highBy = max !== undefined ? value - max : -Infinity;
  const passed = lowBy <= 0 && highBy <= 0;
  const range =
    min !== undefined && max !== undefined
      ? `${fmtLimit(min)} to ${fmtLimit(max)} ${unit}`
      : min !== undefined
        ? `at least ${fmtLimit(min)} ${unit}`
        : `at most ${fmtLimit(max ?? 0)} ${unit}`;
  let explanation: string;
  if (passed) explanation = `${what} ${fmt(value)} ${unit} is within ${range}`;
  else if (min !== undefined && lowBy > 0)
    explanation = `${what} ${fmtAgainst(value, min)} ${unit} is ${fmtGap(lowBy)} ${unitGap} below the ${fmtLimit(min)} ${unit} minimum`;
  else
    explanation = `${what} ${fmtAgainst(value, max ?? 0)} ${unit} is ${fmtGap(highBy)} ${unitGap} above the ${fmtLimit(max ?? 0)} ${unit} maximum`;
  return { measured: value, unit, limit, outcome: verdictOf(passed), passed, explanation };
}

export function count(what: string, n: number, max: number, unit: string, detail = ''): Draft {
  const passed = n <= max;
  const explanation = `${n} ${what}${detail}; ${max === 0 ? 'none allowed' : `at most ${max} allowed`}`;
  return { measured: n, unit, limit: { max }, outcome: verdictOf(passed), passed, explanation };
}

export function membership(
  what: string,
  value: number | string,
  allowed: Array<number | string>,
  unit: string | null,
): Draft {
  const passed = allowed.includes(value);
  const shown = `${value}${unit ? ` ${unit}` : ''}`;
  const explanation = passed ? `${what} ${shown} is allowed` : `${what} ${shown} is not one of ${allowed.join(', ')}`;
  return { measured: value, unit, limit: { allowed }, outcome: verdictOf(passed), passed, explanation };
}
