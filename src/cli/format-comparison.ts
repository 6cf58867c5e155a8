// The text of `earmark compare`: every value with its unit, the verdict first, then what changed.

import type { CheckChange, CheckSide, ComparedFlag, Comparison, ReadingChange } from '../profiles/compare.ts';
import { fmt } from '../profiles/format.ts';
import { printableName } from './printable.ts';

/** Flags listed per group in text unless --all; the JSON has them all. */
const SHOWN_FLAGS = 20;

const value = (v: number | null, unit: string, decimals: number) =>
  v === null ? 'not measured' : `${fmt(v, decimals)} ${unit}`;

function deltaText(r: ReadingChange): string {
  if (r.delta === null) return r.changed ? 'changed' : '';
  if (!r.changed) return 'same';
  return `${r.delta > 0 ? '+' : ''}${fmt(r.delta, r.decimals)} ${r.deltaUnit}`;
}

function measuredText(s: CheckSide | null): string {
  if (!s) return 'not in profile';
  const m = s.measured;
  const shown =
    m === null
      ? 'not measured'
      : Array.isArray(m)
        ? m.join(' ')
        : typeof m === 'number'
          ? Number.isInteger(m)
            ? String(m)
            : fmt(m, 1)
          : m;
  return `${shown}${m !== null && s.unit ? ` ${s.unit}` : ''} (${s.outcome.replace('_', ' ')})`;
}

const CHANGE_WORDS: Record<CheckChange['change'], string> = {
  fixed: 'fixed',
  broken: 'broken',
  still_broken: 'still broken',
  still_met: 'met',
  added: 'new rule',
  removed: 'rule gone',
};

function flagText(f: ComparedFlag): string {
  const worst =
    f.worstValue !== null && f.unit ? `  worst ${fmt(f.worstValue, f.unit === 'correlation' ? 2 : 1)} ${f.unit}` : '';
  const other = f.otherChannelName ? ` / ${f.otherChannelName}` : '';
  const count = f.count > 1 ? `  x${f.count}` : '';
  return `#${f.number} ${f.startTimecode} - ${f.endTimecode} (${fmt(f.startSeconds, 3)} s - ${fmt(f.endSeconds, 3)} s)  ${f.severity}  ${f.title}  ch ${f.channelName}${other}${worst}${count}`;
}

function listed<T>(items: T[], all: boolean, line: (item: T) => string, lines: string[]): void {
  const shown = all ? items : items.slice(0, SHOWN_FLAGS);
  for (const item of shown) lines.push(`  ${line(item)}\n`);
  if (shown.length < items.length) lines.push(`  ... ${items.length - shown.length} more (--all lists them)\n`);
}

export function formatComparison(c: Comparison, { all = false }: { all?: boolean } = {}): string {
  const lines: string[] = [];
  const v = c.verdict;
  lines.push(`verdict  ${v.before.toUpperCase()} -> ${v.after.toUpperCase()}  (${v.change})\n`);
  for (const [name, s] of [
    ['old', c.before],
    ['new', c.after],
  ] as const)
    lines.push(
      `${name}      ${printableName(s.fileName ?? '?')}  profile ${s.profile.id} ${s.profile.version}\n         ${s.headline}\n`,
    );
  for (const w of c.warnings) lines.push(`warning  ${w.message}\n`);
  lines.push(`readings ${'old'.padStart(30)}  ${'new'.padEnd(16)}  change\n`);
  for (const r of c.readings)
    lines.push(
      `  ${r.label.padEnd(20)} ${value(r.before, r.unit, r.decimals).padStart(16)}  ${value(r.after, r.unit, r.decimals).padEnd(16)}  ${deltaText(r)}\n`,
    );
  for (const t of c.format.filter((f) => f.changed))
    lines.push(
      `  ${t.label.padEnd(20)} ${(t.before ?? 'none').padStart(16)}  ${(t.after ?? 'none').padEnd(16)}  changed\n`,
    );
  const moved = c.checks.filter((k) => k.change !== 'still_met');
  const met = c.checks.filter((k) => k.change === 'still_met').map((k) => k.ruleId);
  lines.push(`checks   ${moved.length} changed or still broken, ${met.length} met in both\n`);
  for (const k of moved)
    lines.push(
      `  ${CHANGE_WORDS[k.change].padEnd(12)}  ${k.ruleId}: ${measuredText(k.before)} -> ${measuredText(k.after)}\n`,
    );
  if (met.length > 0) lines.push(`  met in both: ${met.join(', ')}\n`);
  const f = c.flags;
  lines.push(
    `flags    ${f.resolved.length} resolved, ${f.new.length} new, ${f.persisting.length} persisting  (same kind and channel within ${fmt(f.toleranceSeconds, 1)} s)\n`,
  );
  listed(f.resolved, all, (x) => `resolved    ${flagText(x)}`, lines);
  listed(f.new, all, (x) => `new         ${flagText(x)}`, lines);
  listed(
    f.persisting,
    all,
    (p) => `persisting  ${flagText(p.after)}  (was #${p.before.number} at ${p.before.startTimecode})`,
    lines,
  );
  return lines.join('');
}
