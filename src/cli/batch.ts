// `earmark check` on many files: folders expanded, each file checked in a child process (the same
// `earmark check <file> --json`), at most `jobs` at a time, results in the order given.
import { spawn } from 'node:child_process';
import { readdir, stat } from 'node:fs/promises';
import { extname, join, resolve } from 'node:path';
import { PROJECT_ROOT } from '../config/paths.ts';
import { EarmarkError, isErrorCode, type WireError } from '../errors/index.ts';
import { summarise, type ReportSummary } from '../exports/junit.ts';
import { reportFromText } from '../profiles/report-json.ts';

/** What a folder contributes: the audio extensions Earmark reads (a file named outright is always checked). */
const AUDIO_EXTENSIONS = new Set([
  '.wav',
  '.wave',
  '.bwf',
  '.rf64',
  '.aif',
  '.aiff',
  '.aifc',
  '.flac',
  '.ogg',
  '.oga',
  '.opus',
  '.webm',
  '.mka',
  '.caf',
  '.m4a',
  '.mp4',
  '.aac',
  '.mp3',
]);
/** Our own markers output, never checked again when a folder is walked. */
export const MARKERS_SUFFIX = '.markers.wav';
/** Deeper than any delivery tree; bounds a walk through odd mounts. */
const MAX_DEPTH = 32;

async function walk(dir: string, depth: number, out: string[], skip: ReadonlySet<string>): Promise<void> {
  if (depth > MAX_DEPTH) return;
  const entries = await readdir(dir, { withFileTypes: true });
  entries.sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
  for (const e of entries) {
    if (e.name.startsWith('.')) continue;
    const path = join(dir, e.name);
    // Symbolic links to folders are not followed (no cycles); to files they are checked.
    if (e.isDirectory()) await walk(path, depth + 1, out, skip);
    else if (
      (e.isFile() || e.isSymbolicLink()) &&
      AUDIO_EXTENSIONS.has(extname(e.name).toLowerCase()) &&
      !e.name.toLowerCase().endsWith(MARKERS_SUFFIX) &&
      !skip.has(resolve(path))
    )
      out.push(path);
  }
}

/** Files named outright, and the audio files under each folder (recursively, sorted by name); each once. */
export async function expandInputs(
  inputs: readonly string[],
  skip: ReadonlySet<string> = new Set(),
): Promise<string[]> {
  const files: string[] = [];
  for (const input of inputs) {
    const info = await stat(input).catch(() => null);
    if (info?.isDirectory()) await walk(input, 0, files, skip);
    else files.push(input); // a missing file is reported as that file's error
  }
  const seen = new Set<string>();
  return files.filter((f) => !seen.has(resolve(f)) && seen.add(resolve(f)));
}

/** Per file only its summary is kept (a report with its loudness series is far larger), so memory
 * grows by kilobytes per file, not by whole reports. */
export type BatchResult = { file: string; report: ReportSummary } | { file: string; error: WireError };

export interface BatchOptions {
  /** `--profile` as given: an id or a path the children resolve the same way. */
  profile: string;
  fps?: string;
  layout?: string;
  /** Analysis threads per file. */
  threads: string;
  jobs: number;
  onDone?: (result: BatchResult, done: number, total: number) => void;
}

const EARMARK = join(PROJECT_ROOT, 'bin', 'earmark.js');
const ERROR_LINE = /^error ([a-z_]+): ([\s\S]*)$/;

/** One file in a child process: its report, or its error as the child printed it. */
function checkInChild(file: string, o: BatchOptions): Promise<BatchResult> {
  const args = [EARMARK, 'check', file, '--profile', o.profile, '--json', '--threads', o.threads];
  if (o.fps) args.push('--fps', o.fps);
  if (o.layout) args.push('--layout', o.layout);
  return new Promise((done) => {
    const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'pipe'] });
    const out: Buffer[] = [];
    let err = '';
    child.stdout.on('data', (b: Buffer) => out.push(b));
    child.stderr.on('data', (b: Buffer) => {
      if (err.length < 64 * 1024) err += b.toString('utf8');
    });
    const failed = (code: WireError['code'], message: string) => done({ file, error: { code, message, details: {} } });
    child.on('error', (e) => failed('internal_error', `could not start a check: ${e.message}`));
    child.on('close', (code, signal) => {
      if (code !== null && code <= 2) {
        try {
          done({
            file,
            report: summarise(reportFromText(Buffer.concat(out).toString('utf8'), `the report of ${file}`)),
          });
        } catch {
          failed('internal_error', 'the check printed no report');
        }
        return;
      }
      const line = ERROR_LINE.exec(err.trim());
      if (line && isErrorCode(line[1])) failed(line[1], line[2]);
      else
        failed('internal_error', `the check ended with ${signal ?? `exit code ${code}`}: ${err.trim().slice(0, 500)}`);
    });
  });
}

/** Every file checked, `jobs` at a time; results in the order of `files`. */
export async function runBatch(files: readonly string[], o: BatchOptions): Promise<BatchResult[]> {
  if (!Number.isInteger(o.jobs) || o.jobs < 1) throw new EarmarkError('invalid_argument', '--jobs must be 1 or more');
  const results: BatchResult[] = new Array(files.length);
  let next = 0;
  let done = 0;
  const lane = async () => {
    while (next < files.length) {
      const i = next++;
      results[i] = await checkInChild(files[i], o);
      o.onDone?.(results[i], ++done, files.length);
    }
  };
  await Promise.all(Array.from({ length: Math.min(o.jobs, files.length) }, lane));
  return results;
}
