// The Redis the tests use: the one at REDIS_URL, or the private redis-server that the suite's
// globalSetup (redis-setup.ts) starts. Every test keys its data under its own unique prefix.

import { inject } from 'vitest';

export type TestRedis = { url: string } | { problem: string };

declare module 'vitest' {
  export interface ProvidedContext {
    testRedis: TestRedis;
  }
}

/** The URL of the tests' Redis; throws the setup's reason when there is none. */
export function testRedisUrl(): string {
  const redis = inject('testRedis');
  if ('problem' in redis) throw new Error(redis.problem);
  return redis.url;
}
