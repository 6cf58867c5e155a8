// A fixed-seed slice of the mutation fuzzer: no crash, no hang, every outcome a catalogue code.
import { describe, expect, it } from 'vitest';
import { errorCatalogue } from '../../src/errors/index.ts';
import { formatReport, runFuzz } from '../../fixtures/fuzz.ts';

describe('mutation fuzzer', () => {
  it('300 fixed-seed cases: 0 crashes, 0 hangs, only catalogue outcomes', async () => {
    const r = await runFuzz({ cases: 300, seed: 20240611, workers: 2, caseTimeoutMs: 15_000 });
    expect(r.cases, formatReport(r)).toBe(300);
    expect(r.failures, formatReport(r)).toEqual([]);
    expect(r.crashes).toBe(0);
    expect(r.hangs).toBe(0);
    for (const k of Object.keys(r.outcomes)) {
      if (k === 'ok' || k === 'ok-with-warning') continue;
      expect(k).toMatch(/^error:/);
      expect(Object.keys(errorCatalogue)).toContain(k.slice(6));
    }
    expect(Object.values(r.outcomes).reduce((a, b) => a + b, 0)).toBe(300);
  });

  it('counts a hanging and a dying worker without stopping the run', async () => {
    const r = await runFuzz({
      cases: 6,
      seed: 1,
      workers: 1,
      caseTimeoutMs: 3000,
      simulate: (i) => (i === 1 ? 'hang' : i === 3 ? 'crash' : undefined),
    });
    expect(r.cases).toBe(6);
    expect(r.hangs).toBe(1);
    expect(r.crashes).toBe(1);
    expect(r.failures.map((f) => f.caseIndex).sort()).toEqual([1, 3]);
  });
});
