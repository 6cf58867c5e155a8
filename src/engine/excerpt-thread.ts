// Worker-thread entry for one excerpt (excerpt-runner.ts starts it): cuts the span, posts the WAV
// (its buffer transferred, not copied) or the typed error, and ends.
import { parentPort, workerData } from 'node:worker_threads';
import { toWireError, type WireError } from '../errors/index.ts';
import { cutExcerpt } from './excerpt.ts';

export interface ExcerptThreadData {
  path: string;
  startSeconds: number;
  endSeconds: number;
}

export type FromExcerptThread =
  | { type: 'done'; wav: Uint8Array; startSeconds: number; endSeconds: number; sampleRate: number; channels: number }
  | { type: 'error'; error: WireError };

function isExcerptThreadData(value: unknown): value is ExcerptThreadData {
  if (!value || typeof value !== 'object') return false;
  const v: Partial<Record<keyof ExcerptThreadData, unknown>> = value;
  return typeof v.path === 'string' && Number.isFinite(v.startSeconds) && Number.isFinite(v.endSeconds);
}

try {
  if (!isExcerptThreadData(workerData)) throw new Error('the excerpt thread was started without its span');
  const { path, startSeconds, endSeconds } = workerData;
  const excerpt = await cutExcerpt(path, startSeconds, endSeconds);
  const message: FromExcerptThread = { type: 'done', ...excerpt };
  parentPort!.postMessage(message, [excerpt.wav.buffer as ArrayBuffer]);
} catch (error) {
  const message: FromExcerptThread = { type: 'error', error: toWireError(error) };
  parentPort!.postMessage(message);
}
