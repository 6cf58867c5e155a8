// The Redis keys beside BullMQ's: everything lives under `<prefix>:svc:` so one prefix isolates
// a deployment (or a test run). Scripts run by digest, sent in full only when Redis lacks them.

import { createHash } from 'node:crypto';
import type { Redis } from 'ioredis';

export const serviceKey = (prefix: string, ...parts: string[]): string => [prefix, 'svc', ...parts].join(':');

export interface Script {
  source: string;
  sha1: string;
}

export const script = (source: string): Script => ({ source, sha1: createHash('sha1').update(source).digest('hex') });

export async function runScript(
  redis: Redis,
  { source, sha1 }: Script,
  keys: string[],
  args: Array<string | number>,
): Promise<unknown> {
  try {
    return await redis.evalsha(sha1, keys.length, ...keys, ...args);
  } catch (error) {
    if (!(error instanceof Error) || !error.message.startsWith('NOSCRIPT')) throw error;
    return redis.eval(source, keys.length, ...keys, ...args);
  }
}

/** For tests: remove every key under this prefix (BullMQ's and the service's). */
export async function purgePrefix(redis: Redis, prefix: string): Promise<void> {
  let cursor = '0';
  do {
    const [next, keys] = await redis.scan(cursor, 'MATCH', `${prefix}:*`, 'COUNT', 500);
    if (keys.length > 0) await redis.del(...keys);
    cursor = next;
  } while (cursor !== '0');
}
