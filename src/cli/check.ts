// `earmark check <file> --profile <id|path.json> [--fps rate] [--json]`: analyse with the
// profile's settings, evaluate, print. Exit code from the verdict: 0 pass, 1 warn, 2 fail.
// Many files or folders: a batch (batch.ts) with a summary table; exit code the worst verdict.

import { parseCommandArgs } from './args.ts';
import { printableName } from './printable.ts';
import { THREADS_FLAG, threadsOption } from './threads.ts';
import { stat } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { resolve } from 'node:path';
import { EarmarkError, toEarmarkError } from '../errors/index.ts';
import { flagsCsv, type FlagsOfFile } from '../exports/flags-csv.ts';
import { JUNIT_WARN_AS, junitXml, type JunitEntry, type JunitWarnAs } from '../exports/junit.ts';
import { expandInputs, runBatch, type BatchResult } from './batch.ts';
import { formatBatchTable } from './batch-table.ts';
import { checkOneFile } from './check-one.ts';
import { writeMarkersFile, writeTextFile } from './export-files.ts';
import { frameRate, resolveProfile, type Flag, type QcReport, type Verdict } from '../profiles/index.ts';
import { fmt } from '../profiles/format.ts';
import { layoutOption } from './layout-option.ts';
import type { CliIo } from './main.ts';

export const VERDICT_EXIT_CODES: Record<Verdict, number> = { pass: 0, warn: 1, fail: 2 };
/** Flags printed in text: rule breaches first, then remarks; the JSON has them all. */
const SHOWN_BREACHES = 30;
const SHOWN_REMARKS = 10;

const reading = (value: number | null, unit: string, none: string) => (value === null ? none : `${fmt(value)} ${unit}`);

function flagLine(f: Flag): string {
  const worst =
    f.worstValue !== null && f.unit ? `  worst ${fmt(f.worstValue, f.unit === 'correlation' ? 2 : 1)} ${f.unit}` : '';
  const count = f.count > 1 ? `  ${f.count} times` : '';
  const other = f.otherChannelName ? ` / ${f.otherChannelName}` : '';
  return `  #${String(f.number).padEnd(3)} ${f.startTimecode} - ${f.endTimecode}  ${f.severity.padEnd(6)}  ${f.title}  ch ${f.channelName}${other}${worst}${count}${f.ruleId ? `  [${f.ruleId}]` : ''}\n`;
}

/** The head readings, when the profile judges the head (line-up tone, tone separation, sync pops). */
function headLine(report: QcReport): string | null {
  if (!report.checks.some((c) => c.type === 'line-up-tone' || c.type === 'tone-separation' || c.type === 'sync-pop'))
    return null;
  const h = report.head;
  const t = report.headTimecode;
  const main = h.toneSegments.reduce<(typeof h.toneSegments)[number] | null>(
    (a, b) => (a === null || b.endFrame - b.startFrame > a.endFrame - a.startFrame ? b : a),
    null,
  );
  const parts = [
    main
      ? `tone ${fmt(main.frequencyHz, 1)} Hz at ${fmt(main.rmsAes17Db, 2)} dBFS ${t.toneStart} - ${t.toneEnd}`
      : 'no tone',
    ...(t.headPop ? [`pop ${t.headPop}`] : []),
    t.programmeStart ? `programme from ${t.programmeStart}` : 'no programme found',
    ...(t.tailPop ? [`tail pop ${t.tailPop}`] : []),
  ];
  return `head     ${parts.join(', ')}\n`;
}

/** `all`: every kept flag, not only the first few of each severity. */
export function formatReport(report: QcReport, { all = false }: { all?: boolean } = {}): string {
  const lines: string[] = [];
  const s = report.summary;
  const failed = report.checks.filter((c) => !c.passed);
  // The headline comes first: a damaged file's problem is the first thing anyone reads.
  lines.push(`${report.headline}\n`);
  for (const p of report.integrity.problems)
    lines.push(
      `  ${report.integrity.severity.padEnd(6)}  damaged at ${p.atTimecode} (${fmt(p.atSeconds, 3)} s): ${p.message}\n`,
    );
  lines.push(
    `file     ${printableName(report.file?.name ?? '?')}  (${fmt(report.format.durationSeconds ?? 0, 2)} s, ${report.format.sampleRate} Hz, ${report.format.channels} ch ${report.format.channelLabels.join(' ')}${report.format.bitsPerSample ? `, ${report.format.bitsPerSample}-bit` : ''})\n`,
  );
  lines.push(`profile  ${report.profile.id} ${report.profile.version}  (${report.profile.basis})\n`);
  lines.push(
    `readings integrated ${reading(s.integratedLufs, 'LUFS', 'not measurable')}, LRA ${reading(s.loudnessRangeLu, 'LU', 'not measurable')}, ` +
      `true peak ${reading(s.truePeakDbtp, 'dBTP', 'none (silence)')} (reconstructed ${reading(s.reconstructedPeakDbtp, 'dBTP', 'none')}), sample peak ${reading(s.samplePeakDbfs, 'dBFS', 'none (silence)')}\n`,
  );
  lines.push(
    `verdict  ${report.verdict.toUpperCase()}  (${report.checks.length - failed.length} of ${report.checks.length} checks met)\n`,
  );
  for (const c of failed)
    lines.push(`  ${c.severity.padEnd(6)}  ${c.ruleId}: ${c.explanation}${c.source ? `  [${c.source}]` : ''}\n`);
  const passed = report.checks
    .filter((c) => c.passed)
    .map((c) => (c.outcome === 'not_measurable' ? `${c.ruleId} (not measurable)` : c.ruleId));
  if (passed.length > 0) lines.push(`  met: ${passed.join(', ')}\n`);
  const k = report.correction;
  if (k) {
    const tp = k.truePeakAfterDbtp === null ? 'no true peak' : `true peak then ${fmt(k.truePeakAfterDbtp)} dBTP`;
    const ceiling =
      k.ceilingDbtp === null
        ? ''
        : k.exceedsCeiling
          ? ` - over the ${k.ceilingDbtp} dBTP ceiling: needs a limiter`
          : ` (ceiling ${k.ceilingDbtp} dBTP)`;
    lines.push(`gain     ${k.gainDb > 0 ? '+' : ''}${fmt(k.gainDb, 2)} dB to ${k.targetLufs} LUFS; ${tp}${ceiling}\n`);
  }
  const head = headLine(report);
  if (head) lines.push(head);
  const tc = report.timecode;
  const n = report.flagCounts;
  lines.push(
    `flags    ${report.flagsTotal} (${n.fail} fail, ${n.warn} warn, ${n.remark} remark)${report.flagsTruncated ? `, ${report.flags.length} kept` : ''}  timecode ${tc.frameRate} fps from ${tc.originTimecode}\n`,
  );
  const unlisted = report.unlistedEvents ?? [];
  if (unlisted.length > 0) {
    const total = unlisted.reduce((sum, u) => sum + u.count, 0);
    const kinds = unlisted.map((u) => `${u.kind} ${u.count} (${u.ruleId ? `${u.ruleId}, ` : ''}${u.severity})`);
    lines.push(
      `  listing cut: ${total} more detections past the analysis's event cap, not listed and not in the flag count above (the checks count them all): ${kinds.join(', ')}\n`,
    );
  }
  const byKind = new Map<string, number>();
  for (const f of report.flags) byKind.set(f.kind, (byKind.get(f.kind) ?? 0) + 1);
  if (byKind.size > 1) lines.push(`  by kind: ${[...byKind].map(([kind, count]) => `${kind} ${count}`).join(', ')}\n`);
  const breaches = report.flags.filter((f) => f.severity !== 'remark').slice(0, all ? undefined : SHOWN_BREACHES);
  const remarks = report.flags.filter((f) => f.severity === 'remark').slice(0, all ? undefined : SHOWN_REMARKS);
  for (const f of [...breaches, ...remarks]) lines.push(flagLine(f));
  const hidden = report.flagsTotal - breaches.length - remarks.length;
  if (hidden > 0)
    lines.push(`  ... ${hidden} more (${all ? "past the report's cap; see --json" : '--all lists them'})\n`);
  return lines.join('');
}

const CHECK_FLAGS = {
  profile: { type: 'string' },
  fps: { type: 'string' },
  layout: { type: 'string' },
  json: { type: 'boolean' },
  all: { type: 'boolean' },
  jobs: { type: 'string' },
  junit: { type: 'string' },
  'junit-warn': { type: 'string' },
  csv: { type: 'string' },
  markers: { type: 'string' },
  ...THREADS_FLAG,
} as const;

function jobsOption(raw: string | undefined): number {
  if (raw === undefined) return availableParallelism();
  const jobs = Number(raw);
  if (raw.trim() === '' || !Number.isInteger(jobs) || jobs < 1 || jobs > 256)
    throw new EarmarkError('invalid_argument', '--jobs must be a whole number from 1 to 256', { field: 'jobs' });
  return jobs;
}

function junitWarnOption(raw: string | undefined): JunitWarnAs {
  const found = JUNIT_WARN_AS.find((w) => w === (raw ?? 'pass'));
  if (!found)
    throw new EarmarkError('invalid_argument', `--junit-warn must be one of ${JUNIT_WARN_AS.join(', ')}`, {
      field: 'junit-warn',
    });
  return found;
}

/** One line of a batch's --json: the verdict and readings, or the error; `--json` on one file gives the whole report. */
function batchJson(r: BatchResult) {
  if ('error' in r) return { file: r.file, error: r.error };
  const { verdict, headline, profile, summary, flagCounts, flagsTotal, unlistedEvents = [] } = r.report;
  return { file: r.file, verdict, headline, profile, ...summary, flagCounts, flagsTotal, unlistedEvents };
}

/** main.ts's error exit: a file of a batch that could not be checked counts as it does alone. */
const EXIT_NOT_CHECKED = 3;
/** Exit code of a batch: the worst verdict, or 3 when a file could not be checked. */
const worstExit = (results: readonly BatchResult[]) =>
  Math.max(0, ...results.map((r) => ('report' in r ? VERDICT_EXIT_CODES[r.report.verdict] : EXIT_NOT_CHECKED)));

export async function checkCommand(args: string[], io: CliIo): Promise<number> {
  const { values, positionals } = parseCommandArgs(args, CHECK_FLAGS);
  if (positionals.length === 0)
    throw new EarmarkError('invalid_argument', 'check needs at least one file or folder', { field: 'file' });
  if (values.profile === undefined)
    throw new EarmarkError('invalid_argument', 'check needs --profile <id|path.json> (see `earmark profiles`)', {
      field: 'profile',
    });
  const fps = values.fps === undefined ? undefined : frameRate(values.fps, 'fps').id;
  const profile = await resolveProfile(values.profile);
  const threads = threadsOption(values.threads);
  // --layout overrides the profile's declared layout.
  const layout = layoutOption(values);
  const warnAs = junitWarnOption(values['junit-warn']);
  const jobs = jobsOption(values.jobs);
  const junit = (entries: JunitEntry[]) =>
    values.junit
      ? writeTextFile(values.junit, junitXml(entries, { warnAs, suiteName: `earmark ${profile.id}` }))
      : null;
  const csv = (files: FlagsOfFile[]) => (values.csv ? writeTextFile(values.csv, flagsCsv(files)) : null);

  // An output never replaces a file being checked.
  const inputs = new Set(positionals.map((p) => resolve(p)));
  for (const name of ['csv', 'junit', 'markers'] as const) {
    const out = values[name];
    if (out !== undefined && inputs.has(resolve(out)))
      throw new EarmarkError('invalid_argument', `--${name} must name a new file, not a file checked`, { field: name });
  }
  const single = positionals.length === 1 && !(await stat(positionals[0]).catch(() => null))?.isDirectory();
  if (single) {
    const file = positionals[0];
    let report: QcReport;
    try {
      report = await checkOneFile(file, profile, { ...(fps ? { fps } : {}), ...(layout ? { layout } : {}), threads });
    } catch (thrown) {
      // A pipeline still gets its JUnit file, with the error in it.
      const error = toEarmarkError(thrown);
      await junit([{ name: file, error: { code: error.code, message: error.message } }]);
      throw error;
    }
    io.stdout(values.json ? `${JSON.stringify(report)}\n` : formatReport(report, { all: values.all === true }));
    await csv([{ file, flags: report.flags }]);
    await junit([{ name: file, report }]);
    if (values.markers !== undefined) {
      const markers = await writeMarkersFile(file, report.flags, values.markers);
      if (!values.json) io.stdout(`markers  ${markers} written to ${printableName(values.markers)}\n`);
    }
    return VERDICT_EXIT_CODES[report.verdict];
  }

  if (values.markers !== undefined)
    throw new EarmarkError('invalid_argument', '--markers writes the markers of one file: name one file', {
      field: 'markers',
    });
  const outputs = new Set([values.csv, values.junit].flatMap((p) => (p ? [resolve(p)] : [])));
  const files = await expandInputs(positionals, outputs);
  if (files.length === 0)
    throw new EarmarkError('invalid_argument', 'no audio files found in the folders given', { field: 'file' });
  const results = await runBatch(files, {
    profile: values.profile,
    ...(values.fps ? { fps: values.fps } : {}),
    ...(layout ? { layout } : {}),
    // One analysis thread per file when files run side by side: at most `jobs` threads in all.
    threads: values.threads ?? (Math.min(jobs, files.length) > 1 ? '1' : 'auto'),
    jobs,
    onDone: (r, done, total) =>
      io.stderr(
        `[${done}/${total}] ${printableName(r.file)}: ${'report' in r ? r.report.verdict : `error ${r.error.code}`}\n`,
      ),
  });
  io.stdout(values.json ? `${JSON.stringify(results.map(batchJson))}\n` : formatBatchTable(results));
  await csv(results.flatMap((r) => ('report' in r ? [{ file: r.file, flags: r.report.flags }] : [])));
  await junit(
    results.map((r) => ('report' in r ? { name: r.file, report: r.report } : { name: r.file, error: r.error })),
  );
  return worstExit(results);
}
