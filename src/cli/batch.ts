// `earmark check` on many files: folders expanded, each file checked in a child process, at most
// `jobs` at a time (one lane each, its child reused from file to file: batch-lane.ts), results in
// the order given.
import { readdir, stat } from 'node:fs/promises';
import { extname, join, resolve } from 'node:path';
import { childRssLimitMb } from '../config/index.ts';
import { EarmarkError, type WireError } from '../errors/index.ts';
import type { ReportSummary } from '../exports/junit.ts';
import { BatchLane, defaultFileDeadlineMs, type LaneLimits } from './batch-lane.ts';

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
  /** Defaults: defaultFileDeadlineMs, and EARMARK_CHILD_RSS_LIMIT_MB (512 MB, the service's child bound). */
  limits?: Partial<LaneLimits>;
}

/** Every file checked, `jobs` at a time; results in the order of `files`. Every child has ended
 * when this returns; SIGINT or SIGTERM during the batch kills them before the parent goes. */
export async function runBatch(files: readonly string[], o: BatchOptions): Promise<BatchResult[]> {
  if (!Number.isInteger(o.jobs) || o.jobs < 1) throw new EarmarkError('invalid_argument', '--jobs must be 1 or more');
  const limits: LaneLimits = {
    fileDeadlineMs: o.limits?.fileDeadlineMs ?? defaultFileDeadlineMs,
    childRssLimitBytes: o.limits?.childRssLimitBytes ?? childRssLimitMb() * 1024 ** 2,
  };
  const settings = {
    profile: o.profile,
    threads: o.threads,
    ...(o.fps ? { fps: o.fps } : {}),
    ...(o.layout ? { layout: o.layout } : {}),
  };
  const lanes = Array.from({ length: Math.min(o.jobs, files.length) }, () => new BatchLane(settings, limits));
  const onSignal = (signal: NodeJS.Signals) => {
    for (const lane of lanes) lane.kill();
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    // The signal's own outcome (the default ends the process with it) now that no child is left.
    process.kill(process.pid, signal);
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  const results: BatchResult[] = new Array(files.length);
  let next = 0;
  let done = 0;
  const run = async (lane: BatchLane) => {
    while (next < files.length) {
      const i = next++;
      results[i] = await lane.check(files[i]);
      o.onDone?.(results[i], ++done, files.length);
    }
  };
  try {
    await Promise.all(lanes.map(run));
  } finally {
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    await Promise.all(lanes.map((lane) => lane.close()));
  }
  return results;
}
