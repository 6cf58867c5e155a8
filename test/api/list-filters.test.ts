// The listing's submit-time range as read from the query: ISO 8601 forms (ISO 8601-1:2019, the
// calendar date 4.1.2.2 and the time of day with a UTC offset 4.3), a date alone as a whole UTC
// day, and a typed validation error for anything else.

import { describe, expect, it } from 'vitest';
import { submitRange } from '../../src/api/list-filters.ts';

describe('submitRange', () => {
  it('a date alone: from its 00:00 UTC, to its end (the next day 00:00 UTC, exclusive)', () => {
    expect(submitRange('2026-12-04', '2026-12-04')).toEqual({
      fromMs: Date.UTC(2026, 11, 4),
      toMs: Date.UTC(2026, 11, 5),
    });
  });

  it('date-times with Z, an offset, seconds and a fraction', () => {
    expect(submitRange('2026-12-04T09:30Z', undefined)).toEqual({ fromMs: Date.UTC(2026, 11, 4, 9, 30) });
    expect(submitRange(undefined, '2026-12-04T10:30:15+01:00')).toEqual({ toMs: Date.UTC(2026, 11, 4, 9, 30, 15) });
    expect(submitRange('2026-12-04T09:30:15.250-02:30', undefined).fromMs).toBe(Date.UTC(2026, 11, 4, 12, 0, 15, 250));
    // Finer than a millisecond rounds up: "at or after 0.2501 s" starts at the 251st millisecond.
    expect(submitRange('2026-12-04T00:00:00.2501Z', undefined).fromMs).toBe(Date.UTC(2026, 11, 4, 0, 0, 0, 251));
    expect(submitRange(undefined, undefined)).toEqual({});
  });

  it.each([
    ['submittedFrom', '2026-02-30', undefined],
    ['submittedFrom', '2026-13-01', undefined],
    ['submittedFrom', '2026-12-04T24:00:00Z', undefined],
    ['submittedFrom', '2026-12-04T09:60Z', undefined],
    ['submittedFrom', '2026-12-04T09:30', undefined],
    ['submittedTo', undefined, 'yesterday'],
    ['submittedTo', undefined, '2026-12-04T09:30:00+25:00'],
    ['submittedTo', '2026-12-05', '2026-12-04'],
    ['submittedTo', '2026-12-04T10:00Z', '2026-12-04T10:00Z'],
  ])('refuses %s in (%s, %s) with validation_failed', (field, from, to) => {
    let thrown: unknown;
    try {
      submitRange(from, to);
    } catch (error) {
      thrown = error;
    }
    expect(thrown).toMatchObject({ code: 'validation_failed', details: { field } });
  });
});
