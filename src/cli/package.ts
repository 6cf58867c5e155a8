// `earmark package --profile P --mix m.wav --stem a.wav --stem b.wav ... | --version x.wav --version y.wav`:
// each file against the profile, then the set together. Exit code from the package verdict.

import { parseCommandArgs } from './args.ts';
import { VERDICT_EXIT_CODES } from './check.ts';
import type { CliIo } from './main.ts';
import { printableName } from './printable.ts';
import { THREADS_FLAG, threadsOption } from './threads.ts';
import { DEFAULT_RESIDUAL_TOLERANCE_DB } from '../analysis/stem-residual.ts';
import type { PackageMemberInput } from '../engine/package-set.ts';
import { EarmarkError } from '../errors/index.ts';
import { checkPackage, type PackageReport } from '../packages/check-package.ts';
import { frameRate, resolveProfile } from '../profiles/index.ts';

const PACKAGE_FLAGS = {
  profile: { type: 'string' },
  'stem-profile': { type: 'string' },
  mix: { type: 'string' },
  stem: { type: 'string', multiple: true },
  version: { type: 'string', multiple: true },
  tolerance: { type: 'string' },
  fps: { type: 'string' },
  json: { type: 'boolean' },
  ...THREADS_FLAG,
} as const;

/** Spans printed in text; the JSON has them all (up to the engine's cap). */
const SHOWN_SPANS = 20;

const db = (value: number | null, unit: string, none = 'digital silence') =>
  value === null ? none : `${value.toFixed(1)} ${unit}`;

export function formatPackage(report: PackageReport): string {
  const lines: string[] = [`${report.headline}\n`];
  lines.push(`profile  ${report.profile.id} ${report.profile.version}\n`);
  const stemProfile = report.members.find((m) => m.role === 'stem')?.report.profile;
  if (stemProfile && stemProfile.id !== report.profile.id)
    lines.push(`stems    ${stemProfile.id} ${stemProfile.version}\n`);
  lines.push('files\n');
  const byName = new Map(report.set.members.map((m) => [m.name, m]));
  for (const m of report.members) {
    const f = byName.get(m.name);
    const format = f
      ? `${f.sampleRate} Hz, ${f.depth}, ${f.channels} ch, ${f.frames} samples (${f.durationSeconds.toFixed(3)} s)`
      : '';
    const sm = m.report.summary;
    const readings = `integrated ${db(sm.integratedLufs, 'LUFS', 'not measurable')}, true peak ${db(sm.truePeakDbtp, 'dBTP', 'none')}`;
    lines.push(
      `  ${m.role.padEnd(7)} ${m.verdict.toUpperCase().padEnd(4)}  ${printableName(m.name)}  ${format}; ${readings}\n`,
    );
    if (m.verdict !== 'pass') lines.push(`            ${m.headline}\n`);
  }
  lines.push('set\n');
  for (const c of report.set.checks)
    lines.push(`  ${(c.passed ? 'ok' : 'FAIL').padEnd(4)}  ${c.id}: ${printableName(c.explanation)}\n`);
  const r = report.set.residual;
  if (r) {
    lines.push(
      `residual (stems - mix) ${db(r.residualRelativeDb, 'dB')} relative to the mix; RMS ${db(r.residualRmsDbfs, 'dBFS')}, ` +
        `mix RMS ${db(r.mixRmsDbfs, 'dBFS')}, peak ${db(r.residualPeakDbfs, 'dBFS', 'none')}, tolerance ${r.toleranceDb} dB\n`,
    );
    const mix = report.set.members.find((m) => m.role === 'mix');
    const labels = mix?.channelLabels ?? [];
    const rate = mix?.sampleRate ?? 1;
    for (const c of r.channels)
      lines.push(
        `  ch ${labels[c.channel] ?? c.channel + 1}: ${db(c.residualRelativeDb, 'dB')} relative, peak ${db(c.residualPeakDbfs, 'dBFS', 'none')}${c.residualPeakFrame === null ? '' : ` at ${(c.residualPeakFrame / rate).toFixed(3)} s`}\n`,
      );
    for (const s of report.residualSpans.slice(0, SHOWN_SPANS))
      lines.push(
        `  over   ${s.startTimecode} - ${s.endTimecode}  (${s.startSeconds.toFixed(3)} s - ${s.endSeconds.toFixed(3)} s)  ch ${s.channelName}  worst ${db(s.worstRelativeDb, 'dB', 'against a silent mix')}\n`,
      );
    const hidden = r.spansTotal - Math.min(SHOWN_SPANS, report.residualSpans.length);
    if (hidden > 0) lines.push(`  ... ${hidden} more spans over tolerance (see --json)\n`);
  } else if (report.set.residualSkipped && report.members.some((m) => m.role === 'stem'))
    lines.push(`residual not measured: ${printableName(report.set.residualSkipped)}\n`);
  lines.push(`verdict  ${report.verdict.toUpperCase()}\n`);
  return lines.join('');
}

function toleranceOption(raw: string | undefined): number {
  if (raw === undefined) return DEFAULT_RESIDUAL_TOLERANCE_DB;
  const value = Number(raw);
  if (raw.trim() === '' || !Number.isFinite(value) || value >= 0)
    throw new EarmarkError('invalid_argument', `--tolerance needs a number of dB below 0, got "${raw}"`, {
      field: 'tolerance',
    });
  return value;
}

export async function packageCommand(args: string[], io: CliIo): Promise<number> {
  const { values, positionals } = parseCommandArgs(args, PACKAGE_FLAGS);
  if (positionals.length > 0)
    throw new EarmarkError('invalid_argument', 'package takes its files with --mix, --stem and --version', {
      field: 'file',
    });
  if (values.profile === undefined)
    throw new EarmarkError('invalid_argument', 'package needs --profile <id|path.json> (see `earmark profiles`)', {
      field: 'profile',
    });
  const members: PackageMemberInput[] = [
    ...(values.mix !== undefined ? [{ path: values.mix, role: 'mix' as const }] : []),
    ...(values.stem ?? []).map((path) => ({ path, role: 'stem' as const })),
    ...(values.version ?? []).map((path) => ({ path, role: 'version' as const })),
  ];
  const toleranceDb = toleranceOption(values.tolerance);
  const fps = values.fps === undefined ? undefined : frameRate(values.fps, 'fps').id;
  const profile = await resolveProfile(values.profile);
  const stemProfile = values['stem-profile'] === undefined ? undefined : await resolveProfile(values['stem-profile']);
  const report = await checkPackage(profile, members, {
    ...(stemProfile ? { stemProfile } : {}),
    toleranceDb,
    threads: threadsOption(values.threads),
    ...(fps ? { frameRate: fps } : {}),
  });
  io.stdout(values.json ? `${JSON.stringify(report)}\n` : formatPackage(report));
  return VERDICT_EXIT_CODES[report.verdict];
}
