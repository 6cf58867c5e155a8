// `earmark watch <folder> --profile P [--settle-seconds s] [--jobs N]`: checks each audio file
// that arrives in the folder once it is complete and files it under passed/, warned/ or failed/
// with its report (src/cli/watcher.ts). Runs until SIGINT or SIGTERM, which let the files in
// progress finish (at most STOP_GRACE_MS) before it exits.

import { stat } from 'node:fs/promises';
import { parseCommandArgs } from './args.ts';
import { EarmarkError } from '../errors/index.ts';
import { frameRate, resolveProfile } from '../profiles/index.ts';
import { layoutOption } from './layout-option.ts';
import type { CliIo } from './main.ts';
import { THREADS_FLAG, threadsOption } from './threads.ts';
import { printableName } from './printable.ts';
import { lockFolder } from './watch-lock.ts';
import { Watcher } from './watcher.ts';

const DEFAULT_SETTLE_SECONDS = 3;
const STOP_GRACE_MS = 30_000;

const WATCH_FLAGS = {
  profile: { type: 'string' },
  fps: { type: 'string' },
  layout: { type: 'string' },
  'settle-seconds': { type: 'string' },
  jobs: { type: 'string' },
  ...THREADS_FLAG,
} as const;

function positiveNumber(raw: string | undefined, name: string, fallback: number, whole: boolean): number {
  if (raw === undefined) return fallback;
  const value = Number(raw);
  if (raw.trim() === '' || !Number.isFinite(value) || value <= 0 || (whole && !Number.isInteger(value)))
    throw new EarmarkError(
      'invalid_argument',
      `--${name} needs a ${whole ? 'whole ' : ''}number above 0, got "${raw}"`,
      {
        field: name,
      },
    );
  return value;
}

export async function watchCommand(args: string[], io: CliIo): Promise<number> {
  const { values, positionals } = parseCommandArgs(args, WATCH_FLAGS);
  if (positionals.length !== 1)
    throw new EarmarkError('invalid_argument', 'watch needs exactly one folder', { field: 'folder' });
  if (values.profile === undefined)
    throw new EarmarkError('invalid_argument', 'watch needs --profile <id|path.json> (see `earmark profiles`)', {
      field: 'profile',
    });
  const folder = positionals[0];
  const folderStat = await stat(folder).catch(() => null);
  if (!folderStat?.isDirectory())
    throw new EarmarkError('file_not_found', `${folder} is not a folder`, { field: 'folder' });
  const settleSeconds = positiveNumber(values['settle-seconds'], 'settle-seconds', DEFAULT_SETTLE_SECONDS, false);
  const jobs = positiveNumber(values.jobs, 'jobs', 1, true);
  const fps = values.fps === undefined ? undefined : frameRate(values.fps, 'fps').id;
  const layout = layoutOption(values);
  const profile = await resolveProfile(values.profile);
  const log = (line: string) => io.stdout(`${new Date().toISOString()} ${line}\n`);
  const watcher = new Watcher({
    folder,
    profile,
    settleMs: settleSeconds * 1000,
    jobs,
    check: { threads: threadsOption(values.threads), ...(fps ? { fps } : {}), ...(layout ? { layout } : {}) },
    log,
  });
  const stopped = new Promise<string>((resolve) => {
    process.once('SIGINT', () => resolve('SIGINT'));
    process.once('SIGTERM', () => resolve('SIGTERM'));
  });
  const unlock = await lockFolder(folder);
  try {
    await watcher.start();
  } catch (error) {
    await unlock();
    throw error;
  }
  log(
    `watching ${printableName(folder)} with profile ${profile.id} ${profile.version} (settle ${settleSeconds} s, ${jobs} job${jobs === 1 ? '' : 's'})`,
  );
  const signal = await stopped;
  const waiting = watcher.inProgress();
  log(`${signal}: stopping${waiting.length > 0 ? ` after ${waiting.length} file(s) in progress` : ''}`);
  // A second signal stops at once; a file cut off mid-check is checked again on the next start.
  const again = () => process.exit(130);
  process.once('SIGINT', again);
  process.once('SIGTERM', again);
  const finished = await watcher.stop(STOP_GRACE_MS);
  if (!finished) {
    await unlock();
    log(`stopped with ${watcher.inProgress().length} file(s) unfinished; they are checked again on the next start`);
    process.exit(130);
  }
  await unlock();
  log('stopped');
  process.off('SIGINT', again);
  process.off('SIGTERM', again);
  return 0;
}
