// `--threads N|auto` for the commands that analyse a file; auto (the default) lets the engine
// give a long file two threads (engine/thread-plan.ts).
import type { ThreadChoice } from '../engine/thread-plan.ts';
import { EarmarkError } from '../errors/index.ts';

export const THREADS_FLAG = { threads: { type: 'string' } } as const;

export function threadsOption(raw: string | undefined): ThreadChoice {
  if (raw === undefined || raw === 'auto') return 'auto';
  const threads = Number(raw);
  if (raw.trim() === '' || !Number.isInteger(threads) || threads < 1 || threads > 16) {
    throw new EarmarkError('invalid_argument', '--threads must be auto or a whole number from 1 to 16', {
      field: 'threads',
    });
  }
  return threads;
}
