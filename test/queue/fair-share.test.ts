// The fair-share priorities (src/queue/fair-share.ts) against the tests' real Redis, under a unique prefix.
import { randomBytes } from 'node:crypto';
import type { Redis } from 'ioredis';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createRedis } from '../../src/queue/connection.ts';
import { FairShare, PRIORITY_LIMIT } from '../../src/queue/fair-share.ts';
import { purgePrefix } from '../../src/queue/service-keys.ts';
import { testRedisUrl } from '../helpers/redis.ts';

let redis: Redis;
const prefix = `tf${randomBytes(6).toString('hex')}`;

beforeAll(() => {
  redis = createRedis(testRedisUrl(), 'worker');
});
afterAll(async () => {
  await purgePrefix(redis, prefix);
  await redis.quit();
});

describe('fair-share priorities', () => {
  it('a burst counts up from the clock; another tenant starts at the clock; idle tenants bank nothing', async () => {
    const fair = new FairShare(redis, `${prefix}a`);
    const burst = [];
    for (let i = 0; i < 5; i++) burst.push(await fair.nextPriority('alpha'));
    expect(burst).toEqual([1, 2, 3, 4, 5]);
    expect(await fair.nextPriority('beta')).toBe(1);
    await fair.started(3);
    await fair.started(2); // an older job (a retry) does not move the clock back
    expect(await fair.clock()).toBe(3);
    expect(await fair.nextPriority('beta')).toBe(3);
    expect(await fair.nextPriority('gamma')).toBe(3);
    expect(await fair.nextPriority('alpha')).toBe(6);
    await fair.started(0); // a job from before fair share: ignored
    expect(await fair.clock()).toBe(3);
    // beta idles while the clock moves on: it restarts at the clock, with no credit saved up.
    await fair.started(40);
    expect(await fair.nextPriority('beta')).toBe(40);
  });

  it('never passes BullMQ priority limit', async () => {
    const fair = new FairShare(redis, `${prefix}b`);
    await fair.started(PRIORITY_LIMIT);
    expect(await fair.nextPriority('alpha')).toBe(PRIORITY_LIMIT);
    expect(await fair.nextPriority('alpha')).toBe(PRIORITY_LIMIT);
  });

  it('restarts the clock past the bound only when the queue is empty', async () => {
    const fair = new FairShare(redis, `${prefix}c`, 10);
    await fair.started(9);
    expect(await fair.restartIfIdle(async () => 0)).toBe(false);
    await fair.started(12);
    expect(await fair.restartIfIdle(async () => 1)).toBe(false);
    expect(await fair.clock()).toBe(12);
    // The clock moved between the look and the restart: no restart.
    expect(
      await fair.restartIfIdle(async () => {
        await fair.started(13);
        return 0;
      }),
    ).toBe(false);
    expect(await fair.restartIfIdle(async () => 0)).toBe(true);
    expect(await fair.clock()).toBe(0);
    expect(await fair.nextPriority('alpha')).toBe(1);
  });
});
