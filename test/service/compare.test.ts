// The re-delivery journey through the service: a failing delivery uploaded, fixed by the gain
// its report names, uploaded again, then GET /v1/jobs/:id/compare/:otherId (real API, worker
// and Redis; every response checked against the OpenAPI document).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeFixedDelivery, writeHotDelivery } from '../helpers/redelivery.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, type TestService } from './harness.ts';

const PROFILE = 'delivery-broadcast-stereo';
let service: TestService;
let idle: TestService;
let api: Client;

async function submitAndWait(path: string): Promise<string> {
  const submit = await api.upload(path, { profile: PROFILE }, KEYS.alpha);
  expect(submit.status).toBe(202);
  const id: string = submit.body.id;
  const job = await until(async () => {
    const res = await api.get(`/v1/jobs/${id}`, KEYS.alpha);
    return res.body.state === 'completed' || res.body.state === 'failed' ? res.body : null;
  });
  expect(job.state).toBe('completed');
  return id;
}

let hotId = '';
let fixedId = '';
let gainDb = Number.NaN;

beforeAll(async () => {
  service = await startService();
  // No worker: its jobs stay queued.
  idle = await startService({ worker: false });
  api = client(service.url);
  hotId = await submitAndWait(await writeHotDelivery(service.dir));
  const report = (await api.get(`/v1/jobs/${hotId}/report`, KEYS.alpha)).body;
  expect(report.verdict).toBe('fail');
  gainDb = report.correction.gainDb;
  fixedId = await submitAndWait(await writeFixedDelivery(service.dir, gainDb));
});

afterAll(async () => {
  await service?.close();
  await idle?.close();
});

describe('GET /v1/jobs/:id/compare/:otherId', () => {
  it('a fixed re-delivery: fail -> pass, loudness moved by the applied gain, every flag resolved', async () => {
    const res = await api.get(`/v1/jobs/${hotId}/compare/${fixedId}`, KEYS.alphaReadOnly);
    expect(res.status).toBe(200);
    const c = res.body;
    expect(c.verdict).toEqual({ before: 'fail', after: 'pass', change: 'better' });
    expect(c.before.fileName).toBe('river-documentary-hot.wav');
    expect(c.after.fileName).toBe('river-documentary-fixed.wav');
    const integrated = c.readings.find((r: { key: string }) => r.key === 'integratedLufs');
    expect(integrated).toMatchObject({ unit: 'LUFS', deltaUnit: 'LU', changed: true });
    // ITU-R BS.1770-5 Annex 1: gated mean squares scale with the gain squared and the relative
    // gate moves with them, so a gain of g dB moves the integrated loudness by g LU.
    expect(Math.abs(integrated.delta - gainDb)).toBeLessThan(0.1);
    expect(c.flags.resolved.map((f: { kind: string }) => f.kind)).toEqual(
      expect.arrayContaining(['clipping', 'true_peak_over']),
    );
    expect(c.flags.new).toEqual([]);
    expect(c.flags.persisting).toEqual([]);
    expect(
      c.checks.filter((k: { change: string }) => k.change === 'fixed').map((k: { ruleId: string }) => k.ruleId),
    ).toEqual(expect.arrayContaining(['programme-loudness', 'true-peak', 'no-clipping']));
    expect(c.warnings).toEqual([]);
  });

  it('typed errors: another tenant 404, bad id 400, no key 401, a job not yet completed 409', async () => {
    const other = await api.get(`/v1/jobs/${hotId}/compare/${fixedId}`, KEYS.beta);
    expect(other.status).toBe(404);
    expect(other.body.code).toBe('not_found');
    const bad = await api.get(`/v1/jobs/${hotId}/compare/nope`, KEYS.alpha);
    expect(bad.status).toBe(400);
    expect((await api.get(`/v1/jobs/${hotId}/compare/${fixedId}`)).status).toBe(401);

    const idleApi = client(idle.url);
    const queued = await idleApi.upload(
      await writeHotDelivery(idle.dir, 'queued.wav'),
      { profile: PROFILE },
      KEYS.alpha,
    );
    expect(queued.status).toBe(202);
    const notReady = await idleApi.get(`/v1/jobs/${queued.body.id}/compare/${queued.body.id}`, KEYS.alpha);
    expect(notReady.status).toBe(409);
    expect(notReady.body.code).toBe('report_not_ready');
  });
});
