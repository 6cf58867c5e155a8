// Flags as CSV: RFC 4180 quoting and line ends, unit-bearing column names, and cells a spreadsheet
// would run as formulas neutralised (common practice: OWASP "CSV injection") while negative
// numbers stay numbers.
import { describe, expect, it } from 'vitest';
import { csvNumber, FLAG_CSV_COLUMNS, flagsCsv, flagsOfReport } from '../../src/exports/flags-csv.ts';
import { sampleReport } from '../views/sample-report.ts';

/** A minimal RFC 4180 reader (section 2: quoted fields may hold commas, CRLF and doubled quotes). */
function parseCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [];
  let field = '';
  let quoted = false;
  const endField = () => {
    row.push(field);
    field = '';
  };
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (quoted && c === '"' && text[i + 1] === '"') {
      field += '"';
      i++;
    } else if (quoted && c === '"') quoted = false;
    else if (quoted) field += c;
    else if (c === '"') quoted = true;
    else if (c === ',') endField();
    else if (c === '\r' && text[i + 1] === '\n') {
      endField();
      rows.push(row);
      row = [];
      i++;
    } else field += c;
  }
  expect(field).toBe('');
  return rows;
}

describe('flags CSV', () => {
  const report = sampleReport();

  it('has a header with units and one row per flag, CRLF line ends (RFC 4180 section 2)', () => {
    const csv = flagsCsv([flagsOfReport(report)]);
    expect(csv.endsWith('\r\n')).toBe(true);
    expect(csv.replaceAll('\r\n', '')).not.toMatch(/(?<!")\n/);
    const rows = parseCsv(csv);
    expect(rows[0]).toEqual([...FLAG_CSV_COLUMNS]);
    expect(rows[0]).toContain('start_seconds');
    expect(rows[0]).toContain('worst_value_unit');
    expect(rows.length).toBe(1 + report.flags.length);
    const col = (name: (typeof FLAG_CSV_COLUMNS)[number]) => FLAG_CSV_COLUMNS.indexOf(name);
    for (const [i, f] of report.flags.entries()) {
      const r = rows[i + 1];
      expect(r.length).toBe(FLAG_CSV_COLUMNS.length);
      expect(Number(r[col('start_seconds')])).toBeCloseTo(f.startSeconds, 6);
      expect(r[col('start_timecode')]).toBe(f.startTimecode);
      expect(Number(r[col('end_sample')])).toBe(f.endSample);
      expect(r[col('kind')]).toBe(f.kind);
      expect(r[col('message')]).toBe(f.message);
      expect(r[col('worst_value')]).toBe(f.worstValue === null ? '' : csvNumber(f.worstValue, 4));
    }
  });

  it('quotes commas, quotes and line breaks; prefixes formula starts in text, not negative numbers', () => {
    const f = report.flags[0];
    const hostile = {
      file: '=HYPERLINK("x"),1.wav',
      flags: [
        { ...f, message: '@SUM(A1)\r\nline two, "quoted"', title: '+x', worstValue: -0.25, unit: 'dBTP' },
        { ...f, message: '-2+3', channelName: '\tall', worstValue: -1e-9 },
      ],
    };
    const rows = parseCsv(flagsCsv([hostile]));
    const col = (name: (typeof FLAG_CSV_COLUMNS)[number]) => FLAG_CSV_COLUMNS.indexOf(name);
    expect(rows[1][col('file')]).toBe(`'=HYPERLINK("x"),1.wav`);
    expect(rows[1][col('message')]).toBe(`'@SUM(A1)\r\nline two, "quoted"`);
    expect(rows[1][col('worst_value')]).toBe('-0.25');
    expect(rows[2][col('message')]).toBe("'-2+3");
    expect(rows[2][col('channel')]).toBe("'\tall");
    // A value that rounds to zero is written 0, never "-0".
    expect(rows[2][col('worst_value')]).toBe('0');
    for (const r of rows.slice(1))
      for (const name of ['start_seconds', 'end_seconds', 'duration_seconds', 'worst_value'] as const)
        expect(r[col(name)]).toMatch(/^(-?\d+(\.\d+)?)?$/);
  });

  it('numbers never use exponent notation', () => {
    expect(csvNumber(1e-7, 6)).toBe('0');
    expect(csvNumber(123456789.123, 6)).toBe('123456789.123');
    expect(csvNumber(null, 2)).toBe('');
  });
});
