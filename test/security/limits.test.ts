// Request-side defences against a real server: per-key rate limit, prototype-poisoning keys in
// JSON, multipart field limits, and stored names that never come from the client.

import { mkdtempSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import request from 'supertest';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startApi, type RunningApi } from '../../src/api/server.ts';
import { createRedis } from '../../src/queue/connection.ts';
import { writeSine } from '../service/audio.ts';
import { client, type Client } from '../service/client.ts';
import { KEYS, startService, type TestService } from '../service/harness.ts';

let svc: TestService;
let api: Client;
let limited: TestService;
let wav: string;
/** 10 ms: a request that fits in the socket buffers, so a server that answers before reading it
 * all still gets its answer to the client (with a larger body the client can see EPIPE first). */
let tinyWav: string;

beforeAll(async () => {
  svc = await startService({ worker: false, env: { EARMARK_RATE_LIMIT_PER_MINUTE: '0' } });
  limited = await startService({ worker: false, env: { EARMARK_RATE_LIMIT_PER_MINUTE: '5' } });
  api = client(svc.url);
  wav = await writeSine(join(svc.dir, 'one.wav'), -23, 1);
  tinyWav = await writeSine(join(mkdtempSync(join(tmpdir(), 'earmark-limits-')), 'tiny.wav'), -23, 0.01);
});

afterAll(async () => {
  await svc?.close();
  await limited?.close();
});

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/;

describe('per-key rate limit', () => {
  it('answers 429 rate_limited with Retry-After past the budget, per key (not per IP), health exempt', async () => {
    const lim = client(limited.url);
    const statuses = [];
    for (let i = 0; i < 6; i++) statuses.push((await lim.get('/v1/profiles', KEYS.alpha)).status);
    expect(statuses).toEqual([200, 200, 200, 200, 200, 429]);
    const refused = await lim.get('/v1/queue', KEYS.alpha);
    expect(refused.status).toBe(429);
    expect(refused.headers['content-type']).toContain('application/problem+json');
    expect(refused.body.code).toBe('rate_limited');
    expect(Number(refused.headers['retry-after'])).toBeGreaterThan(0);
    // Same tenant, same address, another key: its own budget.
    expect((await lim.get('/v1/profiles', KEYS.alphaReadOnly)).status).toBe(200);
    expect((await lim.get('/v1/profiles', KEYS.beta)).status).toBe(200);
    for (let i = 0; i < 10; i++) {
      expect((await lim.get('/healthz')).status).toBe(200);
      expect((await lim.get('/readyz')).status).toBe(200);
    }
  });
});

describe('one budget across API replicas', () => {
  let shared: TestService;
  let second: RunningApi;
  beforeAll(async () => {
    shared = await startService({ worker: false, env: { EARMARK_RATE_LIMIT_PER_MINUTE: '5' } });
    // A second API process on the same Redis and prefix: another fastify server, another connection.
    second = await startApi(shared.config, pino({ level: 'silent' }));
  });
  afterAll(async () => {
    await second?.close();
    await shared?.close();
  });

  it('3 requests on one replica and 3 on the other: the 6th is refused, with Retry-After', async () => {
    const a = client(shared.url);
    const b = client(second.url);
    expect(second.url).not.toBe(shared.url);
    const statuses = [];
    for (const api of [a, a, a, b, b]) statuses.push((await api.get('/v1/profiles', KEYS.beta)).status);
    expect(statuses).toEqual([200, 200, 200, 200, 200]);
    const refused = await b.get('/v1/profiles', KEYS.beta);
    expect(refused.status).toBe(429);
    expect(refused.headers['content-type']).toContain('application/problem+json');
    expect(refused.body.code).toBe('rate_limited');
    expect(Number(refused.headers['retry-after'])).toBeGreaterThan(0);
    expect((await a.get('/v1/profiles', KEYS.beta)).status).toBe(429);
    // Counted under this deployment's prefix, so another test run (another prefix) has its own counts.
    const redis = createRedis(shared.config.redisUrl, 'worker');
    const keys = await redis.keys(`${shared.config.queuePrefix}:svc:rate:*`);
    await redis.quit();
    expect(keys).toHaveLength(1);
  });
});

describe('prototype-poisoning keys in profiles', () => {
  let base: Record<string, unknown>;
  beforeAll(async () => {
    const {
      id: _id,
      version: _v,
      ...rest
    } = (await api.get('/v1/profiles/ebu-r128', KEYS.alpha)).body.profile as Record<string, unknown>;
    base = rest;
  });
  const putRaw = (id: string, raw: string) =>
    api.checked(
      request(svc.url)
        .put(`/v1/profiles/${id}`)
        .set('authorization', `Bearer ${KEYS.alphaAdmin}`)
        .set('content-type', 'application/json')
        .send(raw),
    );

  it('the control: the copied profile is accepted as it is', async () => {
    expect((await putRaw('own-copy', JSON.stringify(base))).status).toBe(200);
  });

  it.each([
    ['__proto__ at the top', (j: string) => j.replace('{', '{"__proto__":{"admin":true},'), '__proto__'],
    ['__proto__ in a rule', (j: string) => j.replace('"rules":[{', '"rules":[{"__proto__":{"x":1},'), '__proto__'],
    [
      'constructor.prototype at the top',
      (j: string) => j.replace('{', '{"constructor":{"prototype":{"x":1}},'),
      'constructor',
    ],
    ['a plain constructor key', (j: string) => j.replace('{', '{"constructor":"x",'), 'constructor'],
    ['a prototype key in a rule', (j: string) => j.replace('"rules":[{', '"rules":[{"prototype":1,'), 'prototype'],
  ])('%s: 400 naming the field, nothing stored', async (_name, poison, field) => {
    const raw = poison(JSON.stringify(base));
    expect(raw).not.toBe(JSON.stringify(base));
    const res = await putRaw('poisoned', raw);
    expect(res.status).toBe(400);
    expect(['validation_failed', 'invalid_profile']).toContain(res.body.code);
    expect(String(res.body.field)).toMatch(new RegExp(`(^|\\.)${field}$`));
    expect(({} as Record<string, unknown>).admin).toBeUndefined();
    expect((await api.get('/v1/profiles/poisoned', KEYS.alpha)).status).toBe(404);
  });

  it('multipart metadata with __proto__ is refused too', async () => {
    const res = await api.upload(wav, { profile: 'ebu-r128', metadata: '{"__proto__":{"x":"1"}}' }, KEYS.alpha);
    expect(res.status).toBe(400);
    expect(res.body.field).toBe('metadata.__proto__');
  });
});

describe('multipart limits and stored names', () => {
  const uploads = () => readdirSync(join(svc.dir, 'uploads'));
  const tmp = () => readdirSync(join(svc.dir, 'tmp'));
  const post = () => request(svc.url).post('/v1/jobs').set('authorization', `Bearer ${KEYS.alpha}`);

  it('too many fields, an oversize field and two file parts: typed 4xx, nothing kept', async () => {
    const before = uploads().length;
    let many = post().field('profile', 'ebu-r128');
    for (let i = 0; i < 12; i++) many = many.field(`extra${i}`, 'x');
    const outcomes = [
      await api.checked(many.attach('file', tinyWav)),
      await api.checked(post().field('profile', 'ebu-r128').attach('file', tinyWav).attach('file', tinyWav)),
      await api.checked(post().field('profile', 'ebu-r128').attach('other', tinyWav)),
    ];
    for (const res of outcomes) {
      expect(res.status).toBeGreaterThanOrEqual(400);
      expect(res.status).toBeLessThan(500);
      expect(typeof res.body.code).toBe('string');
    }
    // A 70 KB field: the server answers as soon as the field passes its limit, so the client may
    // still be sending (a broken pipe, seen in CI) or read the typed 4xx; either way nothing is kept.
    const oversize = await post()
      .field('profile', 'ebu-r128')
      .field('externalId', 'x'.repeat(70 * 1024))
      .attach('file', tinyWav)
      .then(
        (r) => `${r.status} ${r.body.code}`,
        (e: Error) => `client: ${e.message}`,
      );
    expect(oversize).toMatch(/^4\d\d [a-z_]+$|^client: write EPIPE|^client: .*ECONNRESET/);
    // Past the parser's own limit (110 parts) it stops reading: the server still answers (a
    // typed 400, or a broken pipe while the client is still sending), keeps nothing, and lives on.
    let flood = post().field('profile', 'ebu-r128');
    for (let i = 0; i < 130; i++) flood = flood.field(`f${i}`, 'x');
    const flooded = await flood.attach('file', wav).then(
      (r) => `${r.status} ${r.body.code}`,
      (e: Error) => `client: ${e.message}`,
    );
    expect(flooded).toMatch(/^400 validation_failed|^client: write EPIPE|^client: .*ECONNRESET/);
    expect((await api.get('/healthz')).status).toBe(200);
    expect(uploads().length).toBe(before);
    expect(tmp()).toEqual([]);
    console.log(
      `[security multipart] ${outcomes.map((r) => `${r.status} ${r.body.code}`).join('; ')}; 70 KB field: ${oversize}; 130 fields: ${flooded}`,
    );
  });

  it('stores uploads under generated names only, whatever the client calls the file', async () => {
    const names = ['../../../escape.wav', '..\\..\\win.wav', 'ctl\x07\x1b[31m\u202e.wav', '/abs/olute.wav'];
    for (const filename of names) {
      const res = await api.checked(post().field('profile', 'ebu-r128').attach('file', wav, { filename }));
      expect(res.status).toBe(202);
      const job = await api.get(`/v1/jobs/${res.body.id}`, KEYS.alpha);
      expect(JSON.stringify(job.body.source)).not.toMatch(/\.\.\/|\\\\|\u0007|\u001b/);
    }
    expect(uploads().length).toBeGreaterThanOrEqual(names.length);
    for (const name of uploads()) expect(name).toMatch(UUID);
    expect(readdirSync(svc.dir).sort()).toEqual(['one.wav', 'reports', 'tmp', 'uploads']);
    expect(readdirSync(join(svc.dir, '..')).some((n) => n.includes('escape') || n.includes('olute'))).toBe(false);
  });
});
