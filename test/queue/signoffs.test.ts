// Sign-offs read back from Redis are checked field by field: a damaged or foreign entry is an error,
// never a record with a wrong decision or a missing who/when.
import { describe, expect, it } from 'vitest';
import { parseSignOff, type SignOff } from '../../src/queue/signoffs.ts';

const entry: SignOff = {
  number: 2,
  decision: 'accept',
  note: 'level agreed with the client by phone',
  verdict: 'fail',
  by: { tenant: 'harbour-post', keyId: 'k_3f9a', operator: 'Desk two' },
  at: '2026-12-04T21:14:03.000Z',
};

describe('parseSignOff', () => {
  it('reads back what add() writes', () => {
    expect(parseSignOff(JSON.stringify(entry))).toEqual(entry);
    expect(parseSignOff(JSON.stringify({ ...entry, note: null }))).toEqual({ ...entry, note: null });
  });

  it('reads an entry written before the operator name was recorded as having none', () => {
    const { operator: _, ...older } = entry.by;
    expect(parseSignOff(JSON.stringify({ ...entry, by: older }))).toEqual({
      ...entry,
      by: { ...older, operator: null },
    });
  });

  it.each([
    ['an unknown decision', { ...entry, decision: 'waive' }],
    ['a pass verdict', { ...entry, verdict: 'pass' }],
    ['no signer', { ...entry, by: null }],
    ['a signer without a key id', { ...entry, by: { tenant: 'harbour-post' } }],
    ['no time', { ...entry, at: undefined }],
    ['a number as text', { ...entry, number: '2' }],
  ])('refuses %s', (_what, damaged) => {
    expect(() => parseSignOff(JSON.stringify(damaged))).toThrow(/shape/);
  });
});
