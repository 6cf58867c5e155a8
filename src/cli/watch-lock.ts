// One watcher per folder: two would check the same files and race each other's journal. The lock
// file holds the owner's process id; a lock whose process is gone (a kill) is taken over.

import { readFile, unlink, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { EarmarkError, errnoCode } from '../errors/index.ts';

export const LOCK_NAME = '.earmark-watch.lock';

function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    // EPERM: it exists but belongs to another user.
    return errnoCode(error) === 'EPERM';
  }
}

/** Takes the folder's lock; resolves to its release. */
export async function lockFolder(folder: string): Promise<() => Promise<void>> {
  const path = join(folder, LOCK_NAME);
  for (let attempt = 0; attempt < 2; attempt++) {
    try {
      await writeFile(path, `${process.pid}\n`, { flag: 'wx' });
      return () => unlink(path).catch(() => undefined);
    } catch (error) {
      if (errnoCode(error) !== 'EEXIST') throw error;
    }
    const owner = Number.parseInt(await readFile(path, 'utf8').catch(() => ''), 10);
    if (Number.isInteger(owner) && owner > 0 && owner !== process.pid && alive(owner))
      throw new EarmarkError('invalid_argument', `another watcher (process ${owner}) is watching ${folder}`, {
        field: 'folder',
      });
    await unlink(path).catch(() => undefined); // stale: its watcher was killed
  }
  throw new EarmarkError('invalid_argument', `could not take the watch lock ${path}`, { field: 'folder' });
}
