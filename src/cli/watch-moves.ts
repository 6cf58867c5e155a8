// Moves for the watch folder that never overwrite: a taken name gets a numbered suffix, and a
// move repeated after a kill finds its own earlier half-done move instead of moving again.

import { link, rename, stat, unlink, writeFile } from 'node:fs/promises';
import type { Stats } from 'node:fs';
import { basename, dirname, extname, join } from 'node:path';
import { errnoCode } from '../errors/index.ts';

export const REPORT_SUFFIX = '.report.json';

export async function statOrNull(path: string): Promise<Stats | null> {
  try {
    return await stat(path);
  } catch (error) {
    if (errnoCode(error) === 'ENOENT') return null;
    throw error;
  }
}

/** `x.wav` in `dir`, or `x-1.wav`, `x-2.wav`...: the first name free for the file and its report. */
export async function freeNames(dir: string, name: string): Promise<{ file: string; report: string }> {
  const ext = extname(name);
  const stem = name.slice(0, name.length - ext.length);
  for (let n = 0; ; n++) {
    const file = n === 0 ? name : `${stem}-${n}${ext}`;
    if ((await statOrNull(join(dir, file))) === null && (await statOrNull(join(dir, file + REPORT_SUFFIX))) === null)
      return { file, report: file + REPORT_SUFFIX };
  }
}

const sameFile = (a: Stats, b: Stats) => a.ino === b.ino && a.dev === b.dev;

/**
 * Moves `from` to `to` unless `to` exists. A hard link then an unlink, so the kernel refuses a
 * taken name (EEXIST) with no window between look and move; a file system without hard links
 * falls back to look, then rename. Returns 'moved', 'already' (an earlier run moved it, or linked
 * it before a kill: the leftover name is removed) or 'taken' (another file holds `to`).
 */
export async function moveNoClobber(from: string, to: string): Promise<'moved' | 'already' | 'taken'> {
  const source = await statOrNull(from);
  const target = await statOrNull(to);
  if (source === null) {
    if (target !== null) return 'already';
    throw Object.assign(new Error(`${from} disappeared before it was moved`), { code: 'ENOENT' });
  }
  if (target !== null) {
    if (!sameFile(source, target)) return 'taken';
    await unlink(from);
    return 'already';
  }
  try {
    await link(from, to);
  } catch (error) {
    const code = errnoCode(error);
    if (code === 'EEXIST') return 'taken';
    if (code !== 'EPERM' && code !== 'ENOTSUP' && code !== 'EOPNOTSUPP' && code !== 'ENOSYS') throw error;
    if ((await statOrNull(to)) !== null) return 'taken';
    await rename(from, to);
    return 'moved';
  }
  await unlink(from);
  return 'moved';
}

/** Writes beside the file through a dot-named temp (the watcher ignores dotfiles), then renames. */
export async function writeAtomically(path: string, text: string): Promise<void> {
  const tmp = join(dirname(path), `.${basename(path)}.tmp-${process.pid}`);
  await writeFile(tmp, text);
  await rename(tmp, path);
}
