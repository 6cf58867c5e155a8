// The CLI's export files: flags as CSV, a JUnit XML summary, a markers WAV. Each is written to a
// temp name beside the target and renamed, so a reader never sees half a file.
import { createWriteStream } from 'node:fs';
import { rename, rm, writeFile } from 'node:fs/promises';
import { resolve } from 'node:path';
import { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { planMarkedWav } from '../exports/cue-wav.ts';
import { EarmarkError } from '../errors/index.ts';
import type { Flag } from '../profiles/index.ts';

async function atomically(path: string, write: (temp: string) => Promise<void>): Promise<void> {
  const temp = `${path}.${process.pid}.partial`;
  try {
    await write(temp);
    await rename(temp, path);
  } catch (error) {
    await rm(temp, { force: true });
    if (error instanceof EarmarkError) throw error;
    const message = error instanceof Error ? error.message : String(error);
    throw new EarmarkError('invalid_argument', `could not write ${path}: ${message}`, { field: 'output' });
  }
}

export const writeTextFile = (path: string, text: string) => atomically(path, (temp) => writeFile(temp, text));

/** A copy of `source` with a cue marker at each flag (never over the source itself). */
export async function writeMarkersFile(source: string, flags: readonly Flag[], path: string): Promise<number> {
  if (resolve(source) === resolve(path))
    throw new EarmarkError('invalid_argument', '--markers must name a new file, not the file checked', {
      field: 'markers',
    });
  const plan = await planMarkedWav(source, flags);
  await atomically(path, (temp) => pipeline(Readable.from(plan.chunks()), createWriteStream(temp)));
  return plan.markers;
}
