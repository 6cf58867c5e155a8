// The listing's submit-time range: ISO 8601 dates or date-times with an offset, read into
// milliseconds. submittedFrom keeps jobs at or after it, submittedTo jobs before it; a date alone
// is a whole UTC day (from its start; to its end). Anything else is a validation_failed problem.

import { EarmarkError } from '../errors/index.ts';
import type { SubmitRange } from '../queue/job-index.ts';

/** The schema's pattern; the parse below also refuses days and times that do not exist. */
export const ISO_DATE_OR_DATE_TIME =
  '^\\d{4}-\\d{2}-\\d{2}(T\\d{2}:\\d{2}(:\\d{2}(\\.\\d{1,9})?)?(Z|[+-]\\d{2}:\\d{2}))?$';

const FORM = /^(\d{4})-(\d{2})-(\d{2})(?:T(\d{2}):(\d{2})(?::(\d{2})(?:\.(\d{1,9}))?)?(?:(Z)|([+-])(\d{2}):(\d{2})))?$/;
const DAY_MS = 86_400_000;

function invalid(field: string, raw: string): EarmarkError {
  return new EarmarkError(
    'validation_failed',
    `${field} "${raw}" is not an ISO 8601 date (2026-12-04) or date-time with an offset (2026-12-04T09:30:00Z)`,
    { field },
  );
}

/** Milliseconds since the epoch at the instant written, or at the start of the day written (UTC);
 * a fraction finer than a millisecond rounds up, so "at or after" and "before" stay exact on
 * whole-millisecond submit times. */
function instantMs(field: string, raw: string): { ms: number; dateOnly: boolean } {
  const m = FORM.exec(raw);
  if (!m) throw invalid(field, raw);
  const num = (v: string | undefined) => (v === undefined ? 0 : Number(v));
  const [year, month, day, hour, minute, second] = [m[1], m[2], m[3], m[4], m[5], m[6]].map(num);
  const utc = Date.UTC(year, month - 1, day, hour, minute, second);
  const back = new Date(utc);
  // Date.UTC rolls 2026-02-30 over to March: a day or time that does not exist does not read back.
  if (
    back.getUTCFullYear() !== year ||
    back.getUTCMonth() !== month - 1 ||
    back.getUTCDate() !== day ||
    back.getUTCHours() !== hour ||
    back.getUTCMinutes() !== minute ||
    back.getUTCSeconds() !== second
  )
    throw invalid(field, raw);
  if (m[4] === undefined) return { ms: utc, dateOnly: true };
  // Integer nanoseconds, so the rounding up is exact.
  const fractionMs = m[7] ? Math.ceil(Number(m[7].padEnd(9, '0')) / 1e6) : 0;
  const offsetMinutes = m[9] ? (m[9] === '-' ? -1 : 1) * (Number(m[10]) * 60 + Number(m[11])) : 0;
  if (m[9] && (Number(m[10]) > 23 || Number(m[11]) > 59)) throw invalid(field, raw);
  return { ms: utc + fractionMs - offsetMinutes * 60_000, dateOnly: false };
}

export function submitRange(submittedFrom: string | undefined, submittedTo: string | undefined): SubmitRange {
  const range: SubmitRange = {};
  if (submittedFrom !== undefined) range.fromMs = instantMs('submittedFrom', submittedFrom).ms;
  if (submittedTo !== undefined) {
    const to = instantMs('submittedTo', submittedTo);
    range.toMs = to.dateOnly ? to.ms + DAY_MS : to.ms;
  }
  if (range.fromMs !== undefined && range.toMs !== undefined && range.fromMs >= range.toMs)
    throw new EarmarkError('validation_failed', 'submittedTo must be later than submittedFrom', {
      field: 'submittedTo',
    });
  return range;
}
