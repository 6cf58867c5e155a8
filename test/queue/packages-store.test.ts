// The package record store against the tests' real Redis, under a unique prefix: kept for the
// retention period, visible to its own tenant only.
import { randomBytes } from 'node:crypto';
import type { Redis } from 'ioredis';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createRedis } from '../../src/queue/connection.ts';
import { parsePackageRecord, type PackageRecord } from '../../src/queue/packages.ts';
import { purgePrefix, serviceKey } from '../../src/queue/service-keys.ts';
import { openServiceStores, type ServiceStores } from '../../src/queue/store.ts';
import { testRedisUrl } from '../helpers/redis.ts';

let redis: Redis;
let store: ServiceStores;
const prefix = `tp${randomBytes(6).toString('hex')}`;
const RETENTION_SECONDS = 90;

beforeAll(() => {
  redis = createRedis(testRedisUrl(), 'worker');
  store = openServiceStores(redis, prefix, RETENTION_SECONDS);
});
afterAll(async () => {
  await purgePrefix(redis, prefix);
  await redis.quit();
});

const record: PackageRecord = {
  packageId: `p_${'a1'.repeat(12)}`,
  tenant: 't1',
  profile: 'house-stems',
  stemProfile: null,
  toleranceDb: -60,
  members: [
    { jobId: `j_${'b2'.repeat(12)}`, role: 'mix' },
    { jobId: `j_${'c3'.repeat(12)}`, role: 'stem' },
  ],
  callbackUrl: null,
  externalId: 'episode-7',
  submittedAt: '2026-12-04T10:00:00.000Z',
};

describe('PackageStore', () => {
  it('keeps the record for the retention period, for its own tenant only', async () => {
    await store.packages.put(record);
    expect(await store.packages.get('t1', record.packageId)).toEqual(record);
    expect(await store.packages.get('t2', record.packageId)).toBeNull();
    expect(await store.packages.get('t1', `p_${'0'.repeat(24)}`)).toBeNull();
    const ttl = await redis.ttl(serviceKey(prefix, 'package', record.packageId));
    expect(ttl).toBeGreaterThan(RETENTION_SECONDS - 5);
    expect(ttl).toBeLessThanOrEqual(RETENTION_SECONDS);
  });

  it.each([
    ['an unknown role', { ...record, members: [{ jobId: 'j_1', role: 'master' }] }],
    ['no members', { ...record, members: undefined }],
    ['a tolerance as text', { ...record, toleranceDb: '-60' }],
    ['no tenant', { ...record, tenant: undefined }],
  ])('refuses a stored record with %s', (_what, damaged) => {
    expect(() => parsePackageRecord(JSON.stringify(damaged))).toThrow(/shape/);
  });
});
