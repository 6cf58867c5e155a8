// Number formatting for one-line explanations: one decimal, two when one would hide a crossing.

const MAX_DECIMALS = 12;

export function fmt(value: number, decimals = 1): string {
  const text = value.toFixed(decimals);
  return text === `-${(0).toFixed(decimals)}` ? (0).toFixed(decimals) : text;
}

/** Formats `value` (with at least `minDecimals`) so that it never reads equal to `limit` when it is not. */
export function fmtAgainst(value: number, limit: number, minDecimals = 1): string {
  // Up to 12 decimals: a measured value a hair past its limit still reads past it.
  for (let decimals = minDecimals; decimals < MAX_DECIMALS; decimals++) {
    if (value === limit || fmt(value, decimals) !== fmt(limit, decimals)) return fmt(value, decimals);
  }
  return fmt(value, MAX_DECIMALS);
}

/** A limit as written in the profile. */
export const fmtLimit = (value: number): string => String(value);

export const signed = (value: number): string => (value > 0 ? `+${fmt(value)}` : fmt(value));

/** A positive distance with enough decimals that it does not read as zero. */
export function fmtGap(gap: number): string {
  for (let decimals = 1; decimals < MAX_DECIMALS; decimals++)
    if (fmt(gap, decimals) !== fmt(0, decimals)) return fmt(gap, decimals);
  return fmt(gap, MAX_DECIMALS);
}
