// The pure parts of the report page's downloads and compare links and of the dashboard's
// selection: file names from content-disposition (RFC 6266), progress wording, compare order.
import { describe, expect, it } from 'vitest';
import { comparePathOf, junitPathOf, signOffMarker } from '../../src/views/assets/dashboard-select.js';
import { fileNameFromDisposition, progressText, sizeText } from '../../src/views/assets/download.js';
import { lineageCompareLinks, markersOffer, saveName } from '../../src/views/assets/report-links.js';

const ID_A = 'j_aaaaaaaaaaaaaaaaaaaaaaaa';
const ID_B = 'j_bbbbbbbbbbbbbbbbbbbbbbbb';

describe('download names and progress', () => {
  it('reads the file name from content-disposition (RFC 6266: filename*, then filename)', () => {
    expect(fileNameFromDisposition('attachment; filename="promo.flags.csv"', 'x.csv')).toBe('promo.flags.csv');
    expect(fileNameFromDisposition('attachment; filename=promo.csv', 'x.csv')).toBe('promo.csv');
    expect(fileNameFromDisposition(`attachment; filename="a.csv"; filename*=UTF-8''caf%C3%A9.csv`, 'x.csv')).toBe(
      'café.csv',
    );
    expect(fileNameFromDisposition(null, 'x.csv')).toBe('x.csv');
    expect(fileNameFromDisposition('attachment', 'x.csv')).toBe('x.csv');
    // Never a path or a control character.
    expect(fileNameFromDisposition('attachment; filename="../../etc/passwd"', 'x.csv')).toBe('passwd');
    expect(fileNameFromDisposition('attachment; filename="a\u0007b.csv"', 'x.csv')).toBe('ab.csv');
    expect(fileNameFromDisposition('attachment; filename="/"', 'x.csv')).toBe('x.csv');
  });

  it('names a save as the API does (src/api/plugins/exports.ts downloadName)', () => {
    expect(saveName('river doc (v2).wav', ID_A, '.report.json')).toBe('river_doc_v2_.report.json');
    expect(saveName(undefined, ID_A, '.report.json')).toBe(`${ID_A}.report.json`);
    expect(saveName('..wav', ID_A, '.flags.csv')).toBe(`${ID_A}.flags.csv`);
  });

  it('says how far the preparation is, in decimal units', () => {
    expect(sizeText(400)).toBe('1 kB');
    expect(sizeText(12_345_678)).toBe('12.3 MB');
    expect(sizeText(2_500_000_000)).toBe('2.50 GB');
    expect(progressText(12_300_000, 40_000_000)).toBe('Preparing… 12.3 MB of 40.0 MB (30 %)');
    expect(progressText(5_000, 0)).toBe('Preparing… 5 kB');
  });
});

describe('compare links and markers offer', () => {
  it('puts the older submission first, whichever was chosen first', () => {
    const older = { id: ID_B, createdAt: '2026-12-01T10:00:00.000Z' };
    const newer = { id: ID_A, createdAt: '2026-12-02T10:00:00.000Z' };
    expect(comparePathOf([newer, older])).toBe(`/jobs/${ID_B}/compare/${ID_A}`);
    expect(comparePathOf([older, newer])).toBe(`/jobs/${ID_B}/compare/${ID_A}`);
    expect(comparePathOf([older])).toBeNull();
  });

  it('asks the JUnit export for at most 100 ids (the API limit)', () => {
    const ids = Array.from({ length: 120 }, (_, i) => `j_${String(i).padStart(24, '0')}`);
    const query = new URLSearchParams(junitPathOf(ids).split('?')[1]);
    expect(query.get('ids')?.split(',')).toHaveLength(100);
  });

  it('links a re-run to its original and a job to each of its re-runs', () => {
    expect(lineageCompareLinks({ id: ID_B, rerunOf: ID_A }).map((l) => l.href)).toEqual([
      `/jobs/${ID_A}/compare/${ID_B}`,
    ]);
    expect(lineageCompareLinks({ id: ID_A, reruns: [ID_B] }).map((l) => l.href)).toEqual([
      `/jobs/${ID_A}/compare/${ID_B}`,
    ]);
    expect(lineageCompareLinks({ id: ID_A })).toEqual([]);
  });

  it('offers markers for WAVE, RF64 and BW64 only, and says why not otherwise', () => {
    for (const container of ['wav', 'rf64', 'bw64']) expect(markersOffer({ format: { container } }).offered).toBe(true);
    const flac = markersOffer({ format: { container: 'flac' } });
    expect(flac.offered).toBe(false);
    expect(flac.reason).toContain('flac');
    expect(flac.reason).toContain('WAVE, RF64 or BW64');
  });

  it('words a sign-off marker with who and when', () => {
    const mark = signOffMarker({
      number: 1,
      decision: 'accept',
      note: null,
      verdict: 'warn',
      by: { tenant: 'alpha', keyId: '0123456789ab', operator: null },
      at: '2026-12-04T22:10:03.000Z',
    });
    expect(mark.word).toBe('accepted');
    expect(mark.who).toMatch(/^Accepted the warn verdict, by key 0123456789ab \(alpha\) on \d{4}-\d{2}-\d{2} /);
  });
});
