// GET /v1/jobs with q and a submit-time range over HTTP: the filters reach the listing, the
// range's ends are the createdAt the listing shows (at or after; before), a cursor pages the
// filtered list, and a malformed value is a typed 400 naming its field.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { client, type Client } from './client.ts';
import { KEYS, sleep, startService, type TestService } from './harness.ts';

describe('GET /v1/jobs filters', () => {
  let svc: TestService;
  let api: Client;
  const ids: string[] = [];
  beforeAll(async () => {
    svc = await startService({ worker: false, env: { EARMARK_RATE_LIMIT_PER_MINUTE: '0' } });
    api = client(svc.url);
    for (const [i, name] of ['Alpha-Mix.wav', 'bravo-stems.wav', 'Charlie-MIX.wav', 'delta.wav'].entries()) {
      const res = await api.postJson(
        '/v1/jobs',
        { sourceUrl: `http://127.0.0.1:9/${name}`, profile: 'ebu-r128', externalId: `PO-${100 + i}` },
        KEYS.alpha,
      );
      expect(res.status).toBe(202);
      ids.push(res.body.id);
      await sleep(3); // distinct submit times
    }
  });
  afterAll(async () => {
    await svc?.close();
  });

  it('q matches the URL or file name and the externalId, case-insensitively', async () => {
    const mix = await api.get('/v1/jobs?q=mix', KEYS.alpha);
    expect(mix.status).toBe(200);
    expect(mix.body.items.map((j: { id: string }) => j.id)).toEqual([ids[2], ids[0]]);
    const po = await api.get('/v1/jobs?q=po-101', KEYS.alpha);
    expect(po.body.items.map((j: { id: string }) => j.id)).toEqual([ids[1]]);
    expect((await api.get('/v1/jobs?q=PO-1', KEYS.alphaReadOnly)).body.items).toHaveLength(4);
    expect((await api.get('/v1/jobs?q=mix', KEYS.beta)).body.items).toEqual([]);
  });

  it('submittedFrom keeps jobs at or after it, submittedTo those before it; a cursor pages the range', async () => {
    const all = (await api.get('/v1/jobs', KEYS.alpha)).body.items as { id: string; createdAt: string }[];
    const at = (id: string) => all.find((j) => j.id === id)?.createdAt ?? '';
    const from = encodeURIComponent(at(ids[1]));
    const to = encodeURIComponent(at(ids[3]));
    const first = await api.get(`/v1/jobs?submittedFrom=${from}&submittedTo=${to}&limit=1`, KEYS.alpha);
    expect(first.status).toBe(200);
    expect(first.body.items.map((j: { id: string }) => j.id)).toEqual([ids[2]]);
    const second = await api.get(
      `/v1/jobs?submittedFrom=${from}&submittedTo=${to}&limit=1&cursor=${first.body.nextCursor}`,
      KEYS.alpha,
    );
    expect(second.body.items.map((j: { id: string }) => j.id)).toEqual([ids[1]]);
    expect(second.body.nextCursor).toBeNull();
    const day = at(ids[0]).slice(0, 10);
    expect((await api.get(`/v1/jobs?submittedFrom=${day}&submittedTo=${day}`, KEYS.alpha)).body.items).toHaveLength(4);
  });

  it.each([
    ['submittedFrom=2026-02-30', 'submittedFrom'],
    ['submittedFrom=last%20week', 'submittedFrom'],
    ['submittedTo=2026-12-04T10:00', 'submittedTo'],
    ['submittedFrom=2026-12-05&submittedTo=2026-12-04', 'submittedTo'],
    ['q=', 'q'],
  ])('%s is a 400 validation_failed naming %s', async (query, field) => {
    const res = await api.get(`/v1/jobs?${query}`, KEYS.alpha);
    expect(res.status).toBe(400);
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect(res.body).toMatchObject({ code: 'validation_failed', field });
  });
});
