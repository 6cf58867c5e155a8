// `earmark compare <old> <new> [--profile P] [--json] [--all]`: what changed between a delivery
// and its re-delivery. Each side is a report JSON (`check --json`) or an audio file, which is
// checked first with --profile. Exit code: the new side's verdict (0 pass, 1 warn, 2 fail), as
// `check` gives it, so a pipeline gates on the re-delivery.

import { open, stat } from 'node:fs/promises';
import { analyzeFile } from '../engine/analyze-file.ts';
import { EarmarkError } from '../errors/index.ts';
import { compareReports } from '../profiles/compare.ts';
import {
  analysisOptionsForProfile,
  decodeOptionsForProfile,
  evaluate,
  frameRate,
  resolveProfile,
  type Profile,
  type QcReport,
} from '../profiles/index.ts';
import { reportFromText } from '../profiles/report-json.ts';
import { parseCommandArgs } from './args.ts';
import { VERDICT_EXIT_CODES } from './check.ts';
import { formatComparison } from './format-comparison.ts';
import { layoutOption } from './layout-option.ts';
import type { CliIo } from './main.ts';
import { THREADS_FLAG, threadsOption } from './threads.ts';

/** A report JSON larger than this is refused before it is read (a 3-hour report is a few MB). */
export const MAX_REPORT_BYTES = 64 * 1024 * 1024;

const COMPARE_FLAGS = {
  profile: { type: 'string' },
  fps: { type: 'string' },
  layout: { type: 'string' },
  json: { type: 'boolean' },
  all: { type: 'boolean' },
  ...THREADS_FLAG,
} as const;

/** A report when the file's first non-blank byte opens a JSON object; no audio format starts so. */
async function isJsonFile(path: string): Promise<boolean> {
  let head: Buffer;
  try {
    const handle = await open(path, 'r');
    try {
      const buffer = Buffer.alloc(64);
      const { bytesRead } = await handle.read(buffer, 0, buffer.length, 0);
      head = buffer.subarray(0, bytesRead);
    } finally {
      await handle.close();
    }
  } catch {
    // Missing, unreadable, or a folder.
    throw new EarmarkError('file_not_found', `cannot read ${path}`, { field: 'file' });
  }
  return /^\s*\{/.test(head.toString('latin1'));
}

async function readReport(path: string, what: string): Promise<QcReport> {
  const { size } = await stat(path);
  if (size > MAX_REPORT_BYTES)
    throw new EarmarkError(
      'invalid_argument',
      `${what} (${path}) is ${size} bytes, over the ${MAX_REPORT_BYTES}-byte cap for a report`,
      {
        field: what,
      },
    );
  const handle = await open(path, 'r');
  try {
    return reportFromText(await handle.readFile('utf8'), `${what} (${path})`);
  } finally {
    await handle.close();
  }
}

export async function compareCommand(args: string[], io: CliIo): Promise<number> {
  const { values, positionals } = parseCommandArgs(args, COMPARE_FLAGS);
  if (positionals.length !== 2)
    throw new EarmarkError('invalid_argument', 'compare needs two files: <old report or audio> <new report or audio>', {
      field: 'file',
    });
  const fps = values.fps === undefined ? undefined : frameRate(values.fps, 'fps').id;
  const threads = threadsOption(values.threads);
  const layout = layoutOption(values);
  let profile: Profile | null = null;
  const side = async (path: string, what: string): Promise<QcReport> => {
    if (await isJsonFile(path)) return readReport(path, what);
    if (values.profile === undefined)
      throw new EarmarkError(
        'invalid_argument',
        `${what} (${path}) is an audio file: give --profile <id|path.json> to check it`,
        {
          field: 'profile',
        },
      );
    profile ??= await resolveProfile(values.profile);
    const document = await analyzeFile(path, {
      analysis: analysisOptionsForProfile(profile),
      decode: layout ? { layout } : decodeOptionsForProfile(profile),
      threads,
    });
    return evaluate(profile, document, fps ? { frameRate: fps } : {});
  };
  // One after the other: each analysis uses the cores it is given.
  const before = await side(positionals[0], 'the old file');
  const after = await side(positionals[1], 'the new file');
  const comparison = compareReports(before, after);
  io.stdout(
    values.json ? `${JSON.stringify(comparison)}\n` : formatComparison(comparison, { all: values.all === true }),
  );
  return VERDICT_EXIT_CODES[comparison.verdict.after];
}
