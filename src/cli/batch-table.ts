// The summary table of a batch check: one line per file with its verdict, integrated loudness,
// true peak and flag counts, then the totals.
import { fmt } from '../profiles/format.ts';
import type { BatchResult } from './batch.ts';
import { printableName } from './printable.ts';

const HEAD = ['file', 'verdict', 'integrated', 'true peak', 'fail flags', 'warn flags', 'remarks'];
const reading = (value: number | null, unit: string) => (value === null ? '-' : `${fmt(value)} ${unit}`);

export function formatBatchTable(results: readonly BatchResult[]): string {
  const rows = results.map((r) =>
    'report' in r
      ? [
          printableName(r.file),
          r.report.verdict.toUpperCase(),
          reading(r.report.summary.integratedLufs, 'LUFS'),
          reading(r.report.summary.truePeakDbtp, 'dBTP'),
          String(r.report.flagCounts.fail),
          String(r.report.flagCounts.warn),
          String(r.report.flagCounts.remark),
        ]
      : [printableName(r.file), 'ERROR', '-', '-', '-', '-', '-'],
  );
  const widths = HEAD.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  // Text columns left, numbers right.
  const line = (cells: string[]) =>
    `${cells.map((c, i) => (i < 2 ? c.padEnd(widths[i]) : c.padStart(widths[i]))).join('  ')}\n`.replace(/ +\n$/, '\n');
  const errors = results.flatMap((r) =>
    'error' in r ? [`  ${printableName(r.file)}: error ${r.error.code}: ${printableName(r.error.message)}\n`] : [],
  );
  const count = (v: string) => results.filter((r) => ('report' in r ? r.report.verdict : 'error') === v).length;
  const totals = `${results.length} files: ${count('pass')} pass, ${count('warn')} warn, ${count('fail')} fail, ${count('error')} not checked\n`;
  return [line(HEAD), ...rows.map(line), ...(errors.length ? ['not checked:\n', ...errors] : []), totals].join('');
}
