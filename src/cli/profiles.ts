// `earmark profiles [id] [--json]`: lists the built-ins, or prints one as JSON to copy into a house profile.

import { parseArgs } from 'node:util';
import { BUILTIN_PROFILES, builtinProfile, type Profile } from '../profiles/index.ts';
import type { CliIo } from './main.ts';

function loudnessText(p: Profile): string {
  const rule = p.rules.find((r) => r.type === 'integrated-loudness');
  if (rule?.type !== 'integrated-loudness') return '-';
  if (rule.toleranceLu !== undefined) return `${rule.targetLufs} LUFS ±${rule.toleranceLu} LU`;
  if (rule.minLufs !== undefined && rule.maxLufs !== undefined) return `${rule.minLufs} to ${rule.maxLufs} LUFS`;
  return rule.minLufs !== undefined ? `>= ${rule.minLufs} LUFS` : `<= ${rule.maxLufs ?? '?'} LUFS`;
}

export function profilesCommand(args: string[], io: CliIo): number {
  const { values, positionals } = parseArgs({
    args,
    options: { json: { type: 'boolean' } },
    allowPositionals: true,
    strict: true,
  });
  if (positionals.length > 0) {
    io.stdout(`${JSON.stringify(builtinProfile(positionals[0]), null, 2)}\n`);
    return 0;
  }
  if (values.json) {
    io.stdout(`${JSON.stringify(BUILTIN_PROFILES)}\n`);
    return 0;
  }
  for (const p of BUILTIN_PROFILES) {
    const tp = p.rules.find((r) => r.type === 'true-peak');
    const peak = tp && tp.type === 'true-peak' ? `<= ${tp.maxDbtp} dBTP` : '';
    io.stdout(
      `${p.id.padEnd(20)} ${p.version}  ${loudnessText(p).padEnd(24)} ${peak.padEnd(12)} ${p.timecode?.frameRate ?? '-'} fps  ${p.basis}\n`,
    );
  }
  io.stdout('copy one with `earmark profiles <id> > house.json`, change its id, and pass --profile house.json\n');
  return 0;
}
