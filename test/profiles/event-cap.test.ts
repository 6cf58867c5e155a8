// Events past the analysis's event cap (MAX_DOCUMENT_EVENTS, each meter's maxEvents): the report
// counts only flags made from listed events and names the rest by kind (unlistedEvents); the
// verdict still counts every event, as the checks read the meters' own totals.

import { afterAll, describe, expect, it } from 'vitest';
import { MAX_DOCUMENT_EVENTS } from '../../src/engine/document.ts';
import { builtinProfile, parseProfile } from '../../src/profiles/index.ts';
import { writeDriven } from '../helpers/driven.ts';
import { checkFile, checkOf, SAMPLE_RATE, setRange, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

describe('events past the event cap', () => {
  it('a heavily clipped file: flagsTotal counts merged flags only, the rest are named by kind, none counted twice', async () => {
    const report = await checkFile(await writeDriven(dir, 8), builtinProfile('delivery-broadcast-stereo'));
    expect(report.eventsTruncated).toBe(true);
    const found = report.eventCounts.clipping ?? 0;
    expect(found).toBeGreaterThan(MAX_DOCUMENT_EVENTS);
    expect(report.verdict).toBe('fail');
    expect(checkOf(report, 'no-clipping')).toMatchObject({ passed: false, measured: found });
    // Every flag the listed events make is listed here (far under the flag cap), and counted once.
    expect(report.flagsTruncated).toBe(false);
    expect(report.flagsTotal).toBe(report.flags.length);
    const { fail, warn, remark } = report.flagCounts;
    expect(fail + warn + remark).toBe(report.flagsTotal);
    // Each clipping event is in one listed flag's count or in the unlisted count, never both.
    const listed = report.flags.filter((f) => f.kind === 'clipping').reduce((sum, f) => sum + f.count, 0);
    const unlisted = report.unlistedEvents?.find((u) => u.kind === 'clipping');
    expect(unlisted).toMatchObject({ ruleId: 'no-clipping', severity: 'fail' });
    expect(listed + (unlisted?.count ?? 0)).toBe(found);
  });

  it('a file whose only breaking event lies past the cap still fails, and names it by kind', async () => {
    // 5200 clip runs (remarks: no rule judges clipping) fill the document's 5000 events in the
    // first 11 s; the one drop-out, which breaks the profile's only rule, is at 15 s.
    const clips = Array.from({ length: 5200 }, (_, i) => 48000 + i * 100);
    const path = await writeTone(dir, {
      segments: [{ seconds: 20, peakDbfs: -20 }],
      edit: (data, start) => {
        for (const s of clips) setRange(s, s + 10, 1, [0])(data, start);
        setRange(15 * SAMPLE_RATE, 15 * SAMPLE_RATE + 2400, 0, [1])(data, start);
      },
    });
    const profile = parseProfile({
      id: 'test-dropouts-only',
      name: 'Drop-outs only',
      version: '1.0.0',
      description: 'test',
      basis: 'house rule',
      rules: [{ id: 'no-dropouts', type: 'dropouts', severity: 'fail', maxCount: 0 }],
    });
    const report = await checkFile(path, profile);
    expect(report.eventCounts.dropout).toBe(1);
    expect(report.events.some((e) => e.kind === 'dropout')).toBe(false); // past the cap
    expect(report.flags.some((f) => f.kind === 'dropout')).toBe(false);
    expect(report.flagCounts.fail).toBe(0);
    expect(checkOf(report, 'no-dropouts').passed).toBe(false);
    expect(report.verdict).toBe('fail');
    expect(report.unlistedEvents).toContainEqual({
      kind: 'dropout',
      ruleId: 'no-dropouts',
      severity: 'fail',
      count: 1,
    });
  });

  it('a file within the cap lists everything: no unlisted events', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 3, peakDbfs: -20 }] });
    const report = await checkFile(path, builtinProfile('ebu-r128'));
    expect(report.eventsTruncated).toBe(false);
    expect(report.unlistedEvents).toEqual([]);
  });
});
