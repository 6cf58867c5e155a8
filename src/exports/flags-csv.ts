// Flags as CSV (RFC 4180: CRLF line ends, fields with a comma, quote or line break quoted, quotes
// doubled). One row per kept flag, a `file` column so a batch fits in one sheet. Text cells that a
// spreadsheet would run as a formula are prefixed with an apostrophe (common practice, OWASP "CSV
// injection"); numeric columns are written by us as plain numbers and never prefixed.

import type { Flag, QcReport } from '../profiles/index.ts';

/** Column names carry their units; the order is the file's column order. */
export const FLAG_CSV_COLUMNS = [
  'file',
  'flag_number',
  'start_seconds',
  'start_timecode',
  'end_seconds',
  'end_timecode',
  'duration_seconds',
  'start_sample',
  'end_sample',
  'channel',
  'other_channel',
  'kind',
  'severity',
  'rule_id',
  'worst_value',
  'worst_value_unit',
  'count',
  'detections',
  'message',
] as const;

type Cell = { text: string } | { number: number | null; decimals: number };

/** Leading characters a spreadsheet reads as a formula (tab and CR too, per OWASP). */
const FORMULA_START = /^[=+\-@\t\r]/;

/** A number as plain decimal text (never exponent notation), trailing zeros dropped. */
export function csvNumber(value: number | null, decimals: number): string {
  if (value === null || !Number.isFinite(value)) return '';
  const fixed = value.toFixed(decimals);
  const trimmed = decimals > 0 ? fixed.replace(/\.?0+$/, '') : fixed;
  return trimmed === '-0' ? '0' : trimmed;
}

function quote(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replaceAll('"', '""')}"` : text;
}

function cell(c: Cell): string {
  if ('text' in c) return quote(FORMULA_START.test(c.text) ? `'${c.text}` : c.text);
  return csvNumber(c.number, c.decimals);
}

const text = (value: string | null | undefined): Cell => ({ text: value ?? '' });
const num = (value: number | null, decimals: number): Cell => ({ number: value, decimals });

function row(file: string, f: Flag): Cell[] {
  return [
    text(file),
    num(f.number, 0),
    num(f.startSeconds, 6),
    text(f.startTimecode),
    num(f.endSeconds, 6),
    text(f.endTimecode),
    num(f.endSeconds - f.startSeconds, 6),
    num(f.startSample, 0),
    num(f.endSample, 0),
    text(f.channelName),
    text(f.otherChannelName),
    text(f.kind),
    text(f.severity),
    text(f.ruleId),
    num(f.worstValue, 4),
    text(f.worstValue === null ? null : f.unit),
    num(f.count, 0),
    num(f.detections, 0),
    text(f.message),
  ];
}

export const csvLine = (cells: readonly string[]): string => `${cells.join(',')}\r\n`;

/** The header line. */
export const flagsCsvHeader = (): string => csvLine([...FLAG_CSV_COLUMNS]);

/** One file's flags: the name its rows carry (the path checked, or the report's file name). */
export interface FlagsOfFile {
  file: string;
  flags: readonly Flag[];
}

/** The rows of one report's kept flags (a report caps its flags: `flagsTruncated`). */
export function flagsCsvRows({ file, flags }: FlagsOfFile): string {
  return flags.map((f) => csvLine(row(file, f).map(cell))).join('');
}

/** A whole CSV file: header, then the flags of each file in order. */
export function flagsCsv(files: readonly FlagsOfFile[]): string {
  return flagsCsvHeader() + files.map(flagsCsvRows).join('');
}

/** The entry for a report, named by its file name. */
export const flagsOfReport = (report: Pick<QcReport, 'file' | 'flags'>): FlagsOfFile => ({
  file: report.file?.name ?? '',
  flags: report.flags,
});
