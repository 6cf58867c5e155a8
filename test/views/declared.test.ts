// The report page's declared-against-measured table: its wording (assets/declared.js, pure) and
// its place on the page. The browser run (test/browser) loads the same script.
import { describe, expect, it } from 'vitest';
import { declaredFlagNumbers, declaredRows } from '../../src/views/assets/declared.js';
import { reportPage } from '../../src/views/pages.ts';

const report = {
  declaredLoudness: [
    {
      source: 'bext',
      rows: [
        { field: 'integratedLufs', unit: 'LUFS', declared: -23, measured: -19.9933, measuredMinusDeclared: 3.0067 },
        { field: 'maxTruePeakDbtp', unit: 'dBTP', declared: -1.1, measured: null, measuredMinusDeclared: null },
      ],
    },
    {
      source: 'ixml',
      rows: [{ field: 'loudnessRangeLu', unit: 'LU', declared: 6.5, measured: 6.52, measuredMinusDeclared: 0.02 }],
    },
  ],
  flags: [
    { kind: 'clipping', number: 1 },
    { kind: 'declared_loudness_mismatch', number: 2 },
  ],
};

describe('declared loudness table', () => {
  it('shows the declared figure as stored (hundredths), the reading to 0.1, and a signed difference', () => {
    expect(declaredRows(report)).toEqual([
      {
        source: 'BWF bext',
        quantity: 'Integrated loudness',
        declared: '-23.00 LUFS',
        measured: '-20.0 LUFS',
        difference: '+3.0 LU',
      },
      { source: 'BWF bext', quantity: 'Max true peak', declared: '-1.10 dBTP', measured: '–', difference: '–' },
      { source: 'iXML', quantity: 'Loudness range', declared: '6.50 LU', measured: '6.5 LU', difference: '0.0 LU' },
    ]);
  });

  it('has no rows for a report without declared loudness (an older report included)', () => {
    expect(declaredRows({ declaredLoudness: [] })).toEqual([]);
    expect(declaredRows({})).toEqual([]);
  });

  it('points at the flags that say a figure differs', () => {
    expect(declaredFlagNumbers(report)).toEqual(['#2']);
  });

  it('has its hidden section on the report page, after the checks', () => {
    const html = reportPage('job-1');
    expect(html).toMatch(/<section id="em-declared"[^>]* hidden>/);
    expect(html.indexOf('em-declared')).toBeGreaterThan(html.indexOf('em-checks-body'));
    expect(html).toContain('<tbody id="em-declared-body"></tbody>');
  });
});
