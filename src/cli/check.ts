// `earmark check <file> --profile <id|path.json> [--fps rate] [--json]`: analyse with the
// profile's settings, evaluate, print. Exit code from the verdict: 0 pass, 1 warn, 2 fail.

import { parseArgs } from 'node:util';
import { printableName } from './printable.ts';
import { analyzeFile } from '../engine/analyze-file.ts';
import { EarmarkError } from '../errors/index.ts';
import { analysisOptionsForProfile, evaluate, frameRate, resolveProfile, type Flag, type QcReport, type Verdict } from '../profiles/index.ts';
import { fmt } from '../profiles/format.ts';
import type { CliIo } from './main.ts';

export const VERDICT_EXIT_CODES: Record<Verdict, number> = { pass: 0, warn: 1, fail: 2 };
const SHOWN_FLAGS = 20;

const FLAG_UNITS: Partial<Record<Flag['kind'], string>> = {
  clipping: 'dBFS', true_peak_over: 'dBTP', loud_short_term: 'LUFS', loud_momentary: 'LUFS', phase_problem: 'correlation',
};

function flagLine(report: QcReport, f: Flag): string {
  const channel = f.channel === null ? 'all' : `ch ${f.channel + 1} (${report.channels[f.channel]?.label ?? '?'})`;
  const other = f.otherChannel !== undefined ? ` vs ch ${f.otherChannel + 1}` : '';
  const unit = FLAG_UNITS[f.kind];
  const peak = f.peakValue !== null && unit ? `  peak ${fmt(f.peakValue, unit === 'correlation' ? 2 : 1)} ${unit}` : '';
  const merged = f.mergedEvents > 1 ? `  x${f.mergedEvents}` : '';
  return `  ${f.startTimecode} - ${f.endTimecode}  ${f.severity.padEnd(4)}  ${f.kind}  ${channel}${other}${peak}${merged}  [${f.ruleId}]\n`;
}

export function formatReport(report: QcReport): string {
  const lines: string[] = [];
  const failed = report.checks.filter((c) => !c.passed);
  lines.push(`file     ${printableName(report.file?.name ?? '?')}  (${fmt(report.format.durationSeconds ?? 0, 2)} s, ${report.format.sampleRate} Hz, ${report.format.channels} ch)\n`);
  lines.push(`profile  ${report.profile.id} ${report.profile.version}  (${report.profile.basis})\n`);
  lines.push(`verdict  ${report.verdict.toUpperCase()}  (${report.checks.length - failed.length} of ${report.checks.length} checks met)\n`);
  for (const c of failed) lines.push(`  ${c.severity.padEnd(4)}  ${c.ruleId}: ${c.explanation}${c.source ? `  [${c.source}]` : ''}\n`);
  const passed = report.checks.filter((c) => c.passed).map((c) => (c.outcome === 'not_measurable' ? `${c.ruleId} (not measurable)` : c.ruleId));
  if (passed.length > 0) lines.push(`  met: ${passed.join(', ')}\n`);
  const k = report.correction;
  if (k) {
    const tp = k.truePeakAfterDbtp === null ? 'no true peak' : `true peak then ${fmt(k.truePeakAfterDbtp)} dBTP`;
    const ceiling = k.ceilingDbtp === null ? '' : k.exceedsCeiling ? ` - over the ${k.ceilingDbtp} dBTP ceiling: needs a limiter` : ` (ceiling ${k.ceilingDbtp} dBTP)`;
    lines.push(`gain     ${k.gainDb > 0 ? '+' : ''}${fmt(k.gainDb, 2)} dB to ${k.targetLufs} LUFS; ${tp}${ceiling}\n`);
  }
  const tc = report.timecode;
  lines.push(`flags    ${report.flagsTotal}${report.flagsTruncated ? ` (${report.flags.length} kept)` : ''}  timecode ${tc.frameRate} fps from ${tc.originTimecode}\n`);
  for (const f of report.flags.slice(0, SHOWN_FLAGS)) lines.push(flagLine(report, f));
  if (report.flagsTotal > SHOWN_FLAGS) lines.push(`  ... ${report.flagsTotal - SHOWN_FLAGS} more (see --json)\n`);
  return lines.join('');
}

const CHECK_FLAGS = { profile: { type: 'string' }, fps: { type: 'string' }, json: { type: 'boolean' } } as const;

export async function checkCommand(args: string[], io: CliIo): Promise<number> {
  const { values, positionals } = parseArgs({ args, options: CHECK_FLAGS, allowPositionals: true, strict: true });
  if (positionals.length !== 1) throw new EarmarkError('invalid_argument', 'check needs exactly one file', { field: 'file' });
  if (values.profile === undefined) throw new EarmarkError('invalid_argument', 'check needs --profile <id|path.json> (see `earmark profiles`)', { field: 'profile' });
  const fps = values.fps === undefined ? undefined : frameRate(values.fps, 'fps').id;
  const profile = await resolveProfile(values.profile);
  const document = await analyzeFile(positionals[0], { analysis: analysisOptionsForProfile(profile) });
  const report = evaluate(profile, document, fps ? { frameRate: fps } : {});
  io.stdout(values.json ? `${JSON.stringify(report)}\n` : formatReport(report));
  return VERDICT_EXIT_CODES[report.verdict];
}
