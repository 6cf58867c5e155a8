// Redis connections. The API fails fast (no offline queue, one retry) so a Redis outage is a
// 503 at once; workers wait and reconnect (BullMQ requires maxRetriesPerRequest: null there).

import { Redis, type RedisOptions } from 'ioredis';

export type ConnectionRole = 'api' | 'worker';

export function redisOptions(role: ConnectionRole): RedisOptions {
  const common: RedisOptions = {
    lazyConnect: false,
    connectTimeout: 2_000,
    retryStrategy: (times) => Math.min(times * 200, 2_000),
  };
  return role === 'api'
    ? { ...common, enableOfflineQueue: false, maxRetriesPerRequest: 1 }
    : { ...common, maxRetriesPerRequest: null };
}

export function createRedis(url: string, role: ConnectionRole): Redis {
  return new Redis(url, redisOptions(role));
}

/** Resolves when the connection is ready, or rejects after timeoutMs. */
export function waitReady(redis: Redis, timeoutMs: number): Promise<void> {
  if (redis.status === 'ready') return Promise.resolve();
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => {
      cleanup();
      reject(new Error('redis did not answer'));
    }, timeoutMs);
    const onReady = () => {
      cleanup();
      resolve();
    };
    const cleanup = () => {
      clearTimeout(timer);
      redis.off('ready', onReady);
    };
    redis.on('ready', onReady);
  });
}
