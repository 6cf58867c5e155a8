// How many threads one file's analysis gets, and what the decoding thread carries besides meters.
// Two threads pay once the meters' share moved off the decoding thread outweighs a thread's start
// (about 40 ms from the bundle; a few hundred under the TypeScript loader).
import { availableParallelism } from 'node:os';
import type { AudioFormat } from '../decode/types.ts';
import { DECODERS } from '../decode/index.ts';

/** SHA-256 on this class of machine: 1.6-1.7 GB/s with the CPU's SHA extensions (node:crypto). */
const HASH_BYTES_PER_MS = 1.6e6;
/** The unit of every cost figure: one minute of 48 kHz stereo. */
const UNIT_SAMPLES_PER_MINUTE = 48000 * 2 * 60;
/** Shorter files run on one thread: the second thread's start would eat what it saves. */
export const AUTO_THREADS_MIN_SECONDS = 120;

export type ThreadChoice = number | 'auto';

/** Threads for `format`: `auto` is two where two cores are free and the file is long enough. */
export function threadsFor(
  choice: ThreadChoice | undefined,
  format: AudioFormat,
  cores = availableParallelism(),
): number {
  if (choice === undefined) return 1;
  if (choice !== 'auto') return choice;
  if (cores < 2) return 1;
  // An unknown length is a stream whose decode alone outweighs a thread's start.
  return format.durationSeconds === null || format.durationSeconds >= AUTO_THREADS_MIN_SECONDS ? 2 : 1;
}

/**
 * The decoding thread's own load in the meters' units (ms per 48 kHz stereo minute): the
 * decoder's cost, plus hashing the file's bytes when `hashed`.
 */
export function decodeCostFor(format: AudioFormat, sizeBytes: number, hashed: boolean): number {
  const decode = DECODERS[format.container].costMsPerMinute;
  if (!hashed || !format.durationSeconds) return decode;
  const unitsPerMinute = (format.sampleRate * format.channels * 60) / UNIT_SAMPLES_PER_MINUTE;
  const hashMsPerMinute = sizeBytes / (format.durationSeconds / 60) / HASH_BYTES_PER_MS;
  return decode + hashMsPerMinute / unitsPerMinute;
}
