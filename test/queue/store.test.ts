// Redis-backed stores against the tests' real Redis (testRedisUrl), under a unique prefix.
import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Redis } from 'ioredis';
import { createRedis } from '../../src/queue/connection.ts';
import { decodeFailure, encodeFailure } from '../../src/queue/contract.ts';
import { ProfileStore } from '../../src/queue/profile-store.ts';
import { purgePrefix } from '../../src/queue/service-keys.ts';
import { openServiceStores, type ServiceStores } from '../../src/queue/store.ts';
import { sign, verify } from '../../src/worker/webhooks.ts';
import { createHmac } from 'node:crypto';
import { testRedisUrl } from '../helpers/redis.ts';

let redis: Redis;
let store: ServiceStores;
let profiles: ProfileStore;
const prefix = `tq${randomBytes(6).toString('hex')}`;

beforeAll(() => {
  redis = createRedis(testRedisUrl(), 'worker');
  store = openServiceStores(redis, prefix, 60);
  profiles = new ProfileStore(redis, prefix);
});
afterAll(async () => {
  await purgePrefix(redis, prefix);
  expect(await redis.keys(`${prefix}:*`)).toEqual([]);
  await redis.quit();
});

const body = {
  name: 'Test house',
  description: 'invented',
  basis: 'house rule',
  rules: [{ id: 'tp', type: 'true-peak', severity: 'fail', maxDbtp: -2 }],
};

describe('ProfileStore', () => {
  it('every PUT is a new version; tenants are apart; delete hides the id', async () => {
    expect((await profiles.put('t1', 'house', body)).profile.version).toBe('1.0.0');
    const v2 = await profiles.put('t1', 'house', {
      ...body,
      rules: [{ id: 'tp', type: 'true-peak', severity: 'fail', maxDbtp: -3 }],
    });
    expect(v2).toMatchObject({ versions: 2, profile: { version: '2.0.0' } });
    expect(await profiles.get('t2', 'house')).toBeNull();
    expect((await profiles.get('t1', 'house'))?.profile.rules[0]).toMatchObject({ maxDbtp: -3 });
    expect(await profiles.remove('t1', 'house')).toBe(true);
    expect(await profiles.get('t1', 'house')).toBeNull();
    expect(await profiles.remove('t1', 'house')).toBe(false);
  });
  it('saving identical content again keeps its version; a real change makes the next one', async () => {
    const first = await profiles.put('t3', 'same', body);
    // Same content, keys in another order: still the same profile.
    const again = await profiles.put('t3', 'same', {
      rules: body.rules,
      basis: body.basis,
      description: body.description,
      name: body.name,
    });
    expect(again).toMatchObject({ versions: 1, profile: { version: first.profile.version } });
    const changed = await profiles.put('t3', 'same', { ...body, name: 'Renamed' });
    expect(changed).toMatchObject({ versions: 2, profile: { version: '2.0.0' } });
  });
  it('refuses built-ins and a mismatched id; names the bad field', async () => {
    await expect(profiles.put('t1', 'ebu-r128', body)).rejects.toMatchObject({ code: 'forbidden' });
    await expect(profiles.put('t1', 'delivery-podcast', body)).rejects.toMatchObject({ code: 'forbidden' });
    await expect(profiles.put('t1', 'house', { ...body, id: 'other' })).rejects.toMatchObject({
      code: 'invalid_profile',
      details: { field: 'id' },
    });
    await expect(profiles.put('t1', 'house', { ...body, name: '' })).rejects.toMatchObject({
      code: 'invalid_profile',
      details: { field: 'name' },
    });
  });
});

describe('service stores', () => {
  it('pages newest first, with ties in one millisecond kept in order across pages', async () => {
    for (const [id, ms] of [
      ['j_a1', 1000],
      ['j_a2', 2000],
      ['j_a3', 2000],
      ['j_a4', 2000],
      ['j_a5', 3000],
    ] as const)
      await store.index.add('t1', id, ms);
    const seen: string[] = [];
    let cursor: { id: string; scoreMs: number } | null = null;
    for (;;) {
      const page = await store.index.page('t1', cursor, 2);
      if (page.length === 0) break;
      seen.push(...page.map((r) => r.id));
      cursor = page[page.length - 1];
    }
    expect(seen).toEqual(['j_a5', 'j_a4', 'j_a3', 'j_a2', 'j_a1']);
  });
  it('pages through more same-millisecond ties than a page holds, none skipped', async () => {
    const ids = Array.from({ length: 130 }, (_, i) => `j_t${String(i).padStart(3, '0')}`);
    for (const id of ids) await store.index.add('t9', id, 5000);
    await store.index.add('t9', 'j_older', 4000);
    const seen: string[] = [];
    let cursor: { id: string; scoreMs: number } | null = null;
    for (;;) {
      const page = await store.index.page('t9', cursor, 7);
      if (page.length === 0) break;
      seen.push(...page.map((r) => r.id));
      cursor = page[page.length - 1];
    }
    expect(seen).toEqual([...[...ids].reverse(), 'j_older']);
  });
  it('an idempotency key is claimed once per tenant', async () => {
    expect(await store.idempotency.claim('t1', 'k', 'j_1', 'f1')).toBeNull();
    expect(await store.idempotency.claim('t1', 'k', 'j_2', 'f1')).toEqual({ jobId: 'j_1', fingerprint: 'f1' });
    expect(await store.idempotency.claim('t2', 'k', 'j_3', 'f1')).toBeNull();
  });
});

describe('contract helpers', () => {
  it('failure reasons carry a stable code; a child crash maps to internal_error', () => {
    expect(decodeFailure(encodeFailure('corrupt_file', 'bad: header'))).toEqual({
      code: 'corrupt_file',
      message: 'bad: header',
    });
    expect(decodeFailure('Unexpected exit code: null signal: SIGKILL').code).toBe('internal_error');
  });
  it('the webhook signature is HMAC-SHA256 over "<t>.<body>" (RFC 2104; FIPS 180-4 SHA-256)', () => {
    const header = sign('secret-0123456789ab', 1700000000, '{"a":1}');
    expect(header).toBe(
      `t=1700000000,v1=${createHmac('sha256', 'secret-0123456789ab').update('1700000000.{"a":1}').digest('hex')}`,
    );
    expect(verify('secret-0123456789ab', header, '{"a":1}', 1700000100)).toBe(true);
    expect(verify('secret-0123456789ab', header, '{"a":2}', 1700000100)).toBe(false);
    // Older than the 5-minute tolerance: a replay.
    expect(verify('secret-0123456789ab', header, '{"a":1}', 1700000000 + 301)).toBe(false);
  });
});
