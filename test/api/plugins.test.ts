// Plugin wiring and the shared request checks, without a server or Redis.

import Fastify from 'fastify';
import { Redis } from 'ioredis';
import { afterAll, describe, expect, it } from 'vitest';
import { authPlugin } from '../../src/api/plugins/auth.ts';
import { errorsPlugin } from '../../src/api/plugins/errors.ts';
import { parseJsonBody } from '../../src/api/plugins/json-body.ts';
import { rateLimitPlugin } from '../../src/api/plugins/rate-limit.ts';
import { fieldOf, poisonKeyOf, validationProblem } from '../../src/api/validation.ts';

describe('plugin dependencies', () => {
  // Never connects: the plugin only defines its script on the client when it starts.
  const redis = new Redis({ lazyConnect: true });
  const store = { redis, queuePrefix: 'plugins-test' };
  afterAll(() => redis.disconnect());
  it('the rate limit refuses to start without auth registered first (it keys on the principal)', async () => {
    const app = Fastify();
    await expect(app.register(rateLimitPlugin(10, store)).ready()).rejects.toThrow(/earmark-auth/);
    await app.close();
  });
  it('starts after auth', async () => {
    const app = Fastify();
    await app.register(errorsPlugin);
    await app.register(authPlugin([]));
    await app.register(rateLimitPlugin(10, store));
    await expect(app.ready()).resolves.toBeDefined();
    await app.close();
  });
});

describe('validation errors name the field as the client wrote it', () => {
  it('a missing, an unknown and a nested field', () => {
    expect(fieldOf({ instancePath: '', params: { missingProperty: 'profile' } }, 'body')).toBe('profile');
    expect(fieldOf({ instancePath: '', params: { additionalProperty: 'extra' } }, 'body')).toBe('extra');
    expect(fieldOf({ instancePath: '/metadata/desk', params: {} }, 'body')).toBe('metadata.desk');
    expect(fieldOf(undefined, 'querystring')).toBe('querystring');
  });
  it('the problem says what is wrong with it', () => {
    const unknown = validationProblem(
      [{ instancePath: '', params: { additionalProperty: 'extra' }, message: 'must NOT have additional properties' }],
      'body',
    );
    expect(unknown).toMatchObject({
      code: 'validation_failed',
      message: 'extra is not a known field',
      details: { field: 'extra' },
    });
    const bad = validationProblem([{ instancePath: '/limit', params: {}, message: 'must be <= 100' }], 'querystring');
    expect(bad).toMatchObject({ message: 'limit must be <= 100', details: { field: 'limit' } });
  });
});

describe('prototype-poisoning keys', () => {
  it('__proto__ anywhere and constructor.prototype are refused in JSON bodies; a plain constructor key is not', () => {
    expect(() => parseJsonBody('{"a":{"__proto__":{"x":1}}}')).toThrow(/"__proto__" key/);
    expect(() => parseJsonBody('{"constructor":{"prototype":{}}}')).toThrow(/"constructor" key/);
    expect(parseJsonBody('{"constructor":"x"}')).toEqual({ constructor: 'x' });
  });
  it('flat string maps refuse the reserved names too', () => {
    expect(poisonKeyOf(JSON.parse('{"desk":"a","__proto__":"b"}'), true)).toBe('__proto__');
    expect(poisonKeyOf({ prototype: 'x' }, true)).toBe('prototype');
    expect(poisonKeyOf({ prototype: 'x' })).toBeNull();
    expect(poisonKeyOf('text', true)).toBeNull();
  });
});
