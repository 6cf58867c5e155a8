// The watch folder: each audio file, once complete, is checked against the profile; its report is
// written beside it and both move into passed/, warned/ or failed/. Complete means size and mtime
// unchanged over the settle interval, or renamed in from a temp name we saw (same inode).
// fs.watch wakes the scan early; the periodic scan is what counts (fs.watch misses events on
// network and some container file systems).

import { watch, type FSWatcher } from 'node:fs';
import { mkdir, readdir } from 'node:fs/promises';
import { extname, join } from 'node:path';
import { ENGINE_VERSION } from '../engine/document.ts';
import { toEarmarkError, type WireError, toWireError } from '../errors/index.ts';
import type { Profile, QcReport, Verdict } from '../profiles/index.ts';
import { checkOneFile, type CheckOneOptions } from './check-one.ts';
import { printableName } from './printable.ts';
import { WatchJournal, type JournalEntry } from './watch-journal.ts';
import { freeNames, moveNoClobber, REPORT_SUFFIX, statOrNull, writeAtomically } from './watch-moves.ts';

export const OUTCOME_FOLDERS: Record<Verdict, string> = { pass: 'passed', warn: 'warned', fail: 'failed' };

/** Names the decoders read (src/decode/registry.ts); anything else in the folder is left alone. */
const AUDIO_EXTENSIONS = new Set(
  'wav wave bwf rf64 bw64 aif aiff aifc flac ogg oga opus webm weba caf m4a mp4 aac mp3'.split(' '),
);
/** Names a writer uses until the file is complete (common practice for downloads and copies). */
const TEMP_NAME = /(\.part|\.partial|\.tmp|\.temp|\.crdownload|\.download|~)$/i;

export const isTempName = (name: string) => name.startsWith('.') || TEMP_NAME.test(name);
export const isAudioName = (name: string) =>
  !isTempName(name) && AUDIO_EXTENSIONS.has(extname(name).slice(1).toLowerCase());

/** What the watcher writes for a file it could not read: the typed error in place of readings. */
export interface WatchErrorReport {
  verdict: 'fail';
  file: { name: string; sizeBytes: number };
  profile: { id: string; version: string; name: string; basis: string };
  error: WireError;
  engine: { version: string };
  generatedAt: string;
}

export interface WatchOptions {
  folder: string;
  profile: Profile;
  settleMs: number;
  jobs: number;
  check: CheckOneOptions;
  log: (line: string) => void;
}

interface Seen {
  sizeBytes: number;
  mtimeMs: number;
  inode: string;
  /** When this size and mtime were first seen (our clock, not the file system's). */
  sinceMs: number;
  /** Renamed in from a temp name: the writer says it is complete. */
  renamedIn: boolean;
}

const inodeOf = (s: { dev: number; ino: number }) => `${s.dev}:${s.ino}`;
/** A file whose handling failed (permissions, a full disk) is tried again after this long, not every scan. */
const RETRY_MS = 30_000;

export class Watcher {
  private readonly seen = new Map<string, Seen>();
  /** Temp names seen lately, by inode: a file that appears with one's inode, size and mtime was renamed. */
  private readonly temps = new Map<string, { sizeBytes: number; mtimeMs: number; seenMs: number }>();
  private readonly queue: string[] = [];
  private readonly active = new Map<string, Promise<void>>();
  private readonly failedAt = new Map<string, number>();
  private journal!: WatchJournal;
  private fsWatcher: FSWatcher | null = null;
  private timer: NodeJS.Timeout | null = null;
  private scanning: Promise<void> | null = null;
  private rescan = false;
  private stopping = false;

  constructor(private readonly options: WatchOptions) {}

  /** Scan interval: half the settle interval, between 0.2 and 2 seconds. */
  get scanMs(): number {
    return Math.min(2000, Math.max(200, this.options.settleMs / 2));
  }

  async start(): Promise<void> {
    const { folder } = this.options;
    for (const sub of Object.values(OUTCOME_FOLDERS)) await mkdir(join(folder, sub), { recursive: true });
    this.journal = await WatchJournal.load(folder);
    try {
      this.fsWatcher = watch(folder, { persistent: false }, () => this.wake());
      this.fsWatcher.on('error', (error) => {
        this.options.log(`fs.watch stopped (${printableName(error.message)}); the periodic scan continues`);
        this.fsWatcher?.close();
        this.fsWatcher = null;
      });
    } catch (error) {
      this.options.log(`fs.watch unavailable (${printableName(toEarmarkError(error).message)}); scanning only`);
    }
    // A restart first finishes the moves a kill interrupted after the file itself had moved.
    for (const [name, entry] of this.journal.pending())
      if ((await statOrNull(join(folder, name))) === null) await this.finish(name, entry);
    this.timer = setInterval(() => this.wake(), this.scanMs);
    this.wake();
    await this.scanning;
  }

  /** Stops taking files; resolves true when the files in progress finished within `graceMs`. */
  async stop(graceMs: number): Promise<boolean> {
    this.stopping = true;
    this.fsWatcher?.close();
    if (this.timer) clearInterval(this.timer);
    this.queue.length = 0;
    let timeout: NodeJS.Timeout | undefined;
    const finished = await Promise.race([
      Promise.all([this.scanning, ...this.active.values()]).then(() => true),
      new Promise<false>((resolve) => {
        timeout = setTimeout(() => resolve(false), graceMs);
      }),
    ]);
    clearTimeout(timeout);
    return finished;
  }

  inProgress(): string[] {
    return [...this.active.keys()];
  }

  private wake(): void {
    if (this.stopping) return;
    if (this.scanning) {
      this.rescan = true;
      return;
    }
    this.scanning = this.scan()
      .catch((error: unknown) => this.options.log(`scan failed: ${printableName(toEarmarkError(error).message)}`))
      .finally(() => {
        this.scanning = null;
        if (this.rescan) {
          this.rescan = false;
          this.wake();
        }
      });
  }

  private async scan(): Promise<void> {
    const { folder, settleMs } = this.options;
    const now = Date.now();
    const entries = await readdir(folder, { withFileTypes: true });
    const names = new Set<string>();
    const temps = new Set<string>();
    for (const entry of entries) {
      if (!entry.isFile()) continue;
      if (isTempName(entry.name)) {
        const s = await statOrNull(join(folder, entry.name));
        if (s) {
          temps.add(inodeOf(s));
          this.temps.set(inodeOf(s), { sizeBytes: s.size, mtimeMs: s.mtimeMs, seenMs: now });
        }
        continue;
      }
      if (!isAudioName(entry.name)) continue;
      names.add(entry.name);
      if (this.active.has(entry.name) || this.queue.includes(entry.name)) continue;
      const s = await statOrNull(join(folder, entry.name));
      if (s === null) continue;
      const journalled = this.journal.get(entry.name);
      if (journalled?.state === 'checked' && sameIdentity(journalled, s)) {
        this.enqueue(entry.name);
        continue;
      }
      // An empty file is a copy that has not started (an upload that opened the file and stalled):
      // it waits for its content rather than being filed as empty.
      if (s.size === 0) continue;
      const previous = this.seen.get(entry.name);
      if (
        !previous ||
        previous.sizeBytes !== s.size ||
        previous.mtimeMs !== s.mtimeMs ||
        previous.inode !== inodeOf(s)
      ) {
        // Renamed from a temp name we saw, unchanged since (a rename keeps inode, size and mtime):
        // the writer is done. The same inode under both names now is a hard link: that waits.
        const temp = this.temps.get(inodeOf(s));
        const renamedIn =
          temp !== undefined && !temps.has(inodeOf(s)) && temp.sizeBytes === s.size && temp.mtimeMs === s.mtimeMs;
        this.seen.set(entry.name, {
          sizeBytes: s.size,
          mtimeMs: s.mtimeMs,
          inode: inodeOf(s),
          sinceMs: now,
          renamedIn,
        });
        if (renamedIn) this.enqueue(entry.name);
      } else if (now - previous.sinceMs >= settleMs) this.enqueue(entry.name);
    }
    for (const name of this.seen.keys()) if (!names.has(name)) this.seen.delete(name);
    // Kept a little while (a scan can miss a temp name renamed while it ran); an inode number the
    // file system reuses for a new file will not also match size and mtime.
    for (const [inode, temp] of this.temps)
      if (now - temp.seenMs > settleMs + 2 * this.scanMs) this.temps.delete(inode);
  }

  private enqueue(name: string): void {
    const failedAt = this.failedAt.get(name);
    if (failedAt !== undefined && Date.now() - failedAt < RETRY_MS) return;
    this.queue.push(name);
    this.pump();
  }

  private pump(): void {
    while (!this.stopping && this.active.size < this.options.jobs && this.queue.length > 0) {
      const name = this.queue.shift();
      if (name === undefined || this.active.has(name)) continue;
      const job = this.process(name)
        .catch((error: unknown) => {
          this.failedAt.set(name, Date.now());
          this.options.log(
            `${printableName(name)}: ${printableName(toEarmarkError(error).message)}; trying again later`,
          );
        })
        .finally(() => {
          this.active.delete(name);
          this.pump();
        });
      this.active.set(name, job);
    }
  }

  private async process(name: string): Promise<void> {
    const { folder, log } = this.options;
    const path = join(folder, name);
    const before = await statOrNull(path);
    if (before === null) return;
    const journalled = this.journal.get(name);
    if (journalled?.state === 'checked' && sameIdentity(journalled, before)) return this.finish(name, journalled);
    const seen = this.seen.get(name);
    if (!seen?.renamedIn && (!seen || seen.sizeBytes !== before.size || seen.mtimeMs !== before.mtimeMs)) return;
    const identity = { sizeBytes: before.size, mtimeMs: before.mtimeMs };
    if (journalled?.state === 'checking' && sameIdentity(journalled, before))
      log(`${printableName(name)}: its check was interrupted; checking it again`);
    await this.journal.set(name, { ...identity, state: 'checking' });
    const why = seen?.renamedIn ? 'renamed in from a temp name' : `unchanged for ${this.options.settleMs / 1000} s`;
    log(`checking ${printableName(name)} (${before.size} bytes; ${journalled?.state === 'checking' ? 'again' : why})`);
    const started = performance.now();
    let report: QcReport | WatchErrorReport;
    try {
      report = await checkOneFile(path, this.options.profile, this.options.check);
    } catch (thrown) {
      if ((await statOrNull(path)) === null) {
        log(`${printableName(name)}: removed during its check`);
        return this.journal.delete(name);
      }
      report = this.errorReport(name, before.size, thrown);
    }
    const after = await statOrNull(path);
    if (after === null || after.size !== before.size || after.mtimeMs !== before.mtimeMs) {
      // Still being written, or replaced: that report is of a file nobody delivered. Wait again.
      log(`${printableName(name)}: changed during its check; waiting for it to settle`);
      this.seen.delete(name);
      return this.journal.delete(name);
    }
    await writeAtomically(path + REPORT_SUFFIX, `${JSON.stringify(report)}\n`);
    const dir = OUTCOME_FOLDERS[report.verdict];
    const to = await freeNames(join(folder, dir), name);
    const entry = {
      ...identity,
      state: 'checked' as const,
      verdict: report.verdict,
      fileTo: join(dir, to.file),
      reportTo: join(dir, to.report),
    };
    await this.journal.set(name, entry);
    const seconds = ((performance.now() - started) / 1000).toFixed(1);
    const error = 'error' in report ? ` (${report.error.code}: ${printableName(report.error.message)})` : '';
    log(`${printableName(name)}: ${report.verdict.toUpperCase()}${error} in ${seconds} s`);
    await this.finish(name, entry);
  }

  /** Moves the file and its report to the destinations the journal holds, then marks them done. */
  private async finish(name: string, entry: Omit<JournalEntry, 'updatedAt'>): Promise<void> {
    const { folder, log } = this.options;
    let { fileTo, reportTo } = entry;
    if (fileTo === undefined || reportTo === undefined) return;
    if ((await statOrNull(join(folder, name))) === null && (await statOrNull(join(folder, fileTo))) === null) {
      log(`${printableName(name)}: gone from the folder before it was moved; forgetting it`);
      return this.journal.delete(name);
    }
    try {
      let outcome = await moveNoClobber(join(folder, name), join(folder, fileTo));
      if (outcome === 'taken') {
        // Someone put a file at the chosen name since: choose again and record it before moving.
        const dir = fileTo.slice(0, fileTo.length - name.length - 1) || OUTCOME_FOLDERS[entry.verdict ?? 'fail'];
        const to = await freeNames(join(folder, dir), name);
        fileTo = join(dir, to.file);
        reportTo = join(dir, to.report);
        await this.journal.set(name, { ...entry, fileTo, reportTo });
        outcome = await moveNoClobber(join(folder, name), join(folder, fileTo));
        if (outcome === 'taken') throw new Error(`${fileTo} was taken twice while moving`);
      }
      const reportFrom = join(folder, name + REPORT_SUFFIX);
      if ((await statOrNull(reportFrom)) !== null) {
        const moved = await moveNoClobber(reportFrom, join(folder, reportTo));
        if (moved === 'taken') throw new Error(`${reportTo} is taken by another file`);
      }
      await this.journal.set(name, { ...entry, fileTo, reportTo, state: 'done' });
      this.failedAt.delete(name);
      this.seen.delete(name);
      log(`${printableName(name)}: moved to ${printableName(fileTo)}`);
    } catch (error) {
      this.failedAt.set(name, Date.now());
      log(
        `${printableName(name)}: could not move (${printableName(toEarmarkError(error).message)}); trying again later`,
      );
    }
  }

  private errorReport(name: string, sizeBytes: number, thrown: unknown): WatchErrorReport {
    const { id, version, name: profileName, basis } = this.options.profile;
    return {
      verdict: 'fail',
      file: { name, sizeBytes },
      profile: { id, version, name: profileName, basis },
      error: toWireError(thrown),
      engine: { version: ENGINE_VERSION },
      generatedAt: new Date().toISOString(),
    };
  }
}

function sameIdentity(entry: { sizeBytes: number; mtimeMs: number }, s: { size: number; mtimeMs: number }): boolean {
  return entry.sizeBytes === s.size && entry.mtimeMs === s.mtimeMs;
}
