// The watch folder's journal (`.earmark-watch.json`): what the watcher has started, checked and
// moved, so a restart neither checks a finished file again nor moves one twice. Written whole
// to a temp name, synced, then renamed over the old one, so a kill never leaves half a journal.

import { open, readFile, rename } from 'node:fs/promises';
import { join } from 'node:path';
import { EarmarkError, errnoCode } from '../errors/index.ts';
import type { Verdict } from '../profiles/index.ts';

export const JOURNAL_NAME = '.earmark-watch.json';
const JOURNAL_VERSION = 1;
/** Finished entries kept as history; older ones are dropped so the journal stays small. */
const KEPT_DONE_ENTRIES = 1000;

/**
 * checking: the check started (a restart checks the file again: at least once);
 * checked: the report is written beside the file and its destinations chosen (a restart only moves);
 * done: both moved.
 */
export type JournalState = 'checking' | 'checked' | 'done';

export interface JournalEntry {
  sizeBytes: number;
  mtimeMs: number;
  state: JournalState;
  verdict?: Verdict;
  /** Destinations relative to the folder, chosen before the move so a resumed move goes to the same place. */
  fileTo?: string;
  reportTo?: string;
  updatedAt: string;
}

interface JournalFile {
  version: number;
  entries: Record<string, JournalEntry>;
}

const STATES: readonly string[] = ['checking', 'checked', 'done'];

function isEntry(value: unknown): value is JournalEntry {
  if (!value || typeof value !== 'object') return false;
  const e: Record<string, unknown> = { ...value };
  return (
    typeof e.sizeBytes === 'number' &&
    typeof e.mtimeMs === 'number' &&
    typeof e.state === 'string' &&
    STATES.includes(e.state) &&
    typeof e.updatedAt === 'string' &&
    (e.fileTo === undefined || typeof e.fileTo === 'string') &&
    (e.reportTo === undefined || typeof e.reportTo === 'string')
  );
}

export class WatchJournal {
  private entries = new Map<string, JournalEntry>();
  private writing: Promise<void> = Promise.resolve();

  private constructor(private readonly folder: string) {}

  /** Reads the folder's journal (none yet is an empty one); one we cannot read stops the start. */
  static async load(folder: string): Promise<WatchJournal> {
    const journal = new WatchJournal(folder);
    let text: string;
    try {
      text = await readFile(join(folder, JOURNAL_NAME), 'utf8');
    } catch (error) {
      if (errnoCode(error) === 'ENOENT') return journal;
      throw error;
    }
    const unreadable = () =>
      new EarmarkError(
        'invalid_argument',
        `the watch journal ${JOURNAL_NAME} in ${folder} is not one this watcher wrote; move it aside to start afresh`,
        {
          field: 'folder',
        },
      );
    let parsed: unknown;
    try {
      parsed = JSON.parse(text);
    } catch {
      throw unreadable();
    }
    if (
      !parsed ||
      typeof parsed !== 'object' ||
      !('entries' in parsed) ||
      !parsed.entries ||
      typeof parsed.entries !== 'object'
    )
      throw unreadable();
    for (const [name, entry] of Object.entries(parsed.entries)) {
      if (!isEntry(entry)) throw unreadable();
      journal.entries.set(name, entry);
    }
    return journal;
  }

  get(name: string): JournalEntry | undefined {
    return this.entries.get(name);
  }

  /** Entries a restart still has to finish (checked but not yet moved). */
  pending(): Array<[string, JournalEntry]> {
    return [...this.entries].filter(([, e]) => e.state === 'checked');
  }

  /** Records and persists; resolves once the journal on disk holds this change. */
  set(name: string, entry: Omit<JournalEntry, 'updatedAt'>): Promise<void> {
    this.entries.delete(name); // re-inserted last: the map's order is the order of change
    this.entries.set(name, { ...entry, updatedAt: new Date().toISOString() });
    return this.save();
  }

  delete(name: string): Promise<void> {
    this.entries.delete(name);
    return this.save();
  }

  private save(): Promise<void> {
    const done = [...this.entries].filter(([, e]) => e.state === 'done');
    for (const [name] of done.slice(0, Math.max(0, done.length - KEPT_DONE_ENTRIES))) this.entries.delete(name);
    const snapshot: JournalFile = { version: JOURNAL_VERSION, entries: Object.fromEntries(this.entries) };
    // Writes go one after another, each with the state at its call: the last write holds the latest.
    this.writing = this.writing.catch(() => undefined).then(() => this.write(snapshot));
    return this.writing;
  }

  private async write(snapshot: JournalFile): Promise<void> {
    const path = join(this.folder, JOURNAL_NAME);
    const tmp = `${path}.tmp-${process.pid}`;
    const handle = await open(tmp, 'w');
    try {
      await handle.writeFile(`${JSON.stringify(snapshot, null, 1)}\n`);
      await handle.sync();
    } finally {
      await handle.close();
    }
    await rename(tmp, path);
  }
}
