// The review panel's wording (src/views/assets/review.js): pure helpers, checked without a browser.
import { describe, expect, it } from 'vitest';
import { signOffText, versionOptions } from '../../src/views/assets/review.js';

describe('review panel wording', () => {
  it('says who decided what about which verdict, and when (local time)', () => {
    const at = '2026-03-02T09:05:07.000Z';
    const d = new Date(at);
    const pad = (n: number) => String(n).padStart(2, '0');
    const local = `${d.getFullYear()}-${pad(d.getMonth() + 1)}-${pad(d.getDate())} ${pad(d.getHours())}:${pad(d.getMinutes())}:${pad(d.getSeconds())}`;
    const text = signOffText({
      number: 1,
      decision: 'accept',
      note: null,
      verdict: 'fail',
      by: { tenant: 'alpha', keyId: '0123456789ab', operator: null },
      at,
    });
    expect(text).toBe(`Accepted the fail verdict, by key 0123456789ab (alpha) on ${local}`);
    const named = signOffText({
      number: 2,
      decision: 'reject',
      note: null,
      verdict: 'warn',
      by: { tenant: 'alpha', keyId: '0123456789ab', operator: 'Desk two' },
      at,
    });
    expect(named).toBe(`Rejected the warn verdict, by Desk two, with key 0123456789ab (alpha) on ${local}`);
  });

  it('offers the current version, then every older stored one; a built-in has one', () => {
    expect(versionOptions({ profile: { version: '3.0.0' }, builtin: false, versions: 3 })).toEqual([
      { value: '', label: 'current (3.0.0)' },
      { value: '2.0.0', label: '2.0.0' },
      { value: '1.0.0', label: '1.0.0' },
    ]);
    expect(versionOptions({ profile: { version: '1.0.0' }, builtin: true, versions: 1 })).toEqual([
      { value: '', label: 'current (1.0.0)' },
    ]);
  });
});
