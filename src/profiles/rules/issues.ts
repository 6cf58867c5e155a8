// Cross-field profile problems shared by several rule types.
import type { ProfileIssue } from './rule-spec.ts';

/** min above max. */
export function orderIssues(
  at: string,
  minKey: string,
  maxKey: string,
  min: number | undefined,
  max: number | undefined,
): ProfileIssue[] {
  return min !== undefined && max !== undefined && min > max
    ? [{ field: `${at}.${minKey}`, message: `${at}.${minKey} (${min}) is above ${at}.${maxKey} (${max})` }]
    : [];
}

/** None of the keys given. */
export function needOneIssues(at: string, keys: string[], values: unknown[]): ProfileIssue[] {
  return values.some((v) => v !== undefined)
    ? []
    : [
        {
          field: `${at}.${keys[0]}`,
          message: `${at}.${keys[0]} is missing: ${at} needs at least one of ${keys.join(', ')}`,
        },
      ];
}

/** A rule with minimum and/or maximum limits: at least one, in order. */
export function rangeIssues(
  at: string,
  minKey: string,
  maxKey: string,
  min: number | undefined,
  max: number | undefined,
): ProfileIssue[] {
  return [...needOneIssues(at, [minKey, maxKey], [min, max]), ...orderIssues(at, minKey, maxKey, min, max)];
}
