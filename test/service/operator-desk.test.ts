// The operator's desk against a real HTTP server, real Redis and a real worker: re-running a
// finished job's stored audio against another profile or profile version, and signing off a
// warn or fail verdict (recorded, shown in the job and the report, sent to a loopback receiver as
// a signed job.signed_off webhook). Every response is checked against openapi/openapi.yaml.

import { createReadStream, writeFileSync } from 'node:fs';
import { createServer, type IncomingMessage, type Server } from 'node:http';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { verify } from '../../src/worker/webhooks.ts';
import { writeSine } from './audio.ts';
import { client, type Client } from './client.ts';
import { API_KEYS, KEYS, startService, until, WEBHOOK_SECRET, type TestService } from './harness.ts';

const BETA_ADMIN = 'beta-admin-key-00000000005';

let service: TestService;
let api: Client;
let pass: string;
let receiver: Server;
let callbackUrl: string;
const received: Array<{ headers: IncomingMessage['headers']; body: string }> = [];

/** An invented house profile: integrated loudness within 1 LU of the target, or fail. */
const house = (targetLufs: number) => ({
  name: 'House loudness',
  description: 'Invented house rule for the tests',
  basis: 'house rule',
  rules: [{ id: 'loudness', type: 'integrated-loudness', severity: 'fail', targetLufs, toleranceLu: 1 }],
});

async function finished(id: string, key = KEYS.alpha) {
  return until(async () => {
    const res = await api.get(`/v1/jobs/${id}`, key);
    return res.body.state === 'completed' || res.body.state === 'failed' ? res : null;
  });
}

async function upload(profile: string, extra: Record<string, string> = {}): Promise<string> {
  const submit = await api.upload(pass, { profile, ...extra }, KEYS.alpha);
  expect(submit.status).toBe(202);
  await finished(submit.body.id);
  return submit.body.id;
}

beforeAll(async () => {
  const keys = [...JSON.parse(API_KEYS), { key: BETA_ADMIN, tenant: 'beta', scopes: ['admin'] }];
  service = await startService({ env: { EARMARK_API_KEYS: JSON.stringify(keys) } });
  api = client(service.url);
  // 997 Hz stereo sine at -23 dBFS peak reads -23.0 LUFS (ITU-R BS.1770-5): within -23 +/-1 LU, outside -16 +/-1 LU.
  pass = await writeSine(join(service.dir, 'desk-pass.wav'), -23, 4);
  // Version 1 aims at -23 LUFS, version 2 (the current one) at -16 LUFS.
  expect((await api.put('/v1/profiles/house-loud', house(-23), KEYS.alphaAdmin)).body.profile.version).toBe('1.0.0');
  expect((await api.put('/v1/profiles/house-loud', house(-16), KEYS.alphaAdmin)).body.profile.version).toBe('2.0.0');
  receiver = createServer((req, res) => {
    let body = '';
    req.on('data', (c) => {
      body += c;
    });
    req.on('end', () => {
      received.push({ headers: req.headers, body });
      res.writeHead(204).end();
    });
  });
  await new Promise<void>((resolve) => receiver.listen(0, '127.0.0.1', resolve));
  callbackUrl = `http://127.0.0.1:${(receiver.address() as { port: number }).port}/hooks/desk`;
});

afterAll(async () => {
  await service?.close();
  if (receiver) await new Promise<void>((resolve) => receiver.close(() => resolve()));
});

describe('re-run', () => {
  it('checks the stored audio again against another profile and an older version, without an upload', async () => {
    const original = await upload('ebu-r128', { externalId: 'ord-2001' });
    const first = await api.get(`/v1/jobs/${original}/report`, KEYS.alpha);
    expect(first.body.verdict).toBe('pass');

    // Current version of the house profile (2.0.0, -16 LUFS): the same audio fails.
    const rerun = await api.postJson(`/v1/jobs/${original}/reruns`, { profile: 'house-loud' }, KEYS.alpha);
    expect(rerun.status).toBe(202);
    expect(rerun.headers.location).toBe(`/v1/jobs/${rerun.body.id}`);
    const done = await finished(rerun.body.id);
    expect(done.body).toMatchObject({
      state: 'completed',
      verdict: 'fail',
      rerunOf: original,
      externalId: 'ord-2001',
      profile: { id: 'house-loud', version: '2.0.0' },
      source: { kind: 'upload', fileName: 'desk-pass.wav' },
    });
    const second = await api.get(`/v1/jobs/${rerun.body.id}/report`, KEYS.alpha);
    expect(second.body).toMatchObject({ verdict: 'fail', profile: { id: 'house-loud', version: '2.0.0' } });
    // Same bytes, same readings: only the judgement differs.
    expect(second.body.file.sha256).toBe(first.body.file.sha256);
    expect(second.body.summary.integratedLufs).toBe(first.body.summary.integratedLufs);
    // ITU-R BS.1770-5: -23 dBFS peak stereo 997 Hz sine = -23.0 LUFS, 7 LU under the -16 target.
    expect(second.body.summary.integratedLufs).toBeCloseTo(-23, 1);

    // Version 1.0.0 (-23 LUFS) named explicitly: the same audio passes.
    const older = await api.postJson(
      `/v1/jobs/${rerun.body.id}/reruns`,
      { profile: 'house-loud', profileVersion: '1.0.0' },
      KEYS.alpha,
    );
    expect(older.status).toBe(202);
    expect((await finished(older.body.id)).body).toMatchObject({
      verdict: 'pass',
      rerunOf: rerun.body.id,
      profile: { id: 'house-loud', version: '1.0.0' },
    });

    // The original lists its re-run; the re-run lists its own.
    expect((await api.get(`/v1/jobs/${original}`, KEYS.alpha)).body.reruns).toEqual([rerun.body.id]);
    expect((await api.get(`/v1/jobs/${rerun.body.id}`, KEYS.alpha)).body.reruns).toEqual([older.body.id]);
  });

  it('repeats safely with an Idempotency-Key and refuses what it cannot do, with typed problems', async () => {
    const original = await upload('ebu-r128');
    const path = `/v1/jobs/${original}/reruns`;
    const headers = { 'Idempotency-Key': 'desk-rerun-1' };
    const a = await api.postJson(path, { profile: 'house-loud' }, KEYS.alpha, headers);
    const b = await api.postJson(path, { profile: 'house-loud' }, KEYS.alpha, headers);
    expect([a.status, b.status]).toEqual([202, 200]);
    expect(b.body).toMatchObject({ id: a.body.id, duplicate: true });
    const other = await api.postJson(path, { profile: 'ebu-r128' }, KEYS.alpha, headers);
    expect(other.status).toBe(409);
    expect(other.body.code).toBe('idempotency_conflict');
    expect((await api.get(`/v1/jobs/${original}`, KEYS.alpha)).body.reruns).toEqual([a.body.id]);

    const version = await api.postJson(path, { profile: 'house-loud', profileVersion: '9.0.0' }, KEYS.alpha);
    expect(version.status).toBe(422);
    expect(version.body).toMatchObject({ code: 'unknown_profile', field: 'profileVersion' });
    const profile = await api.postJson(path, { profile: 'no-such-profile' }, KEYS.alpha);
    expect(profile.body).toMatchObject({ code: 'unknown_profile', field: 'profile' });
    const badVersion = await api.postJson(path, { profile: 'house-loud', profileVersion: 'latest' }, KEYS.alpha);
    expect(badVersion.status).toBe(400);

    // Another tenant's job answers like a missing one; a read-only key may not re-run.
    expect((await api.postJson(path, { profile: 'ebu-r128' }, KEYS.beta)).body.code).toBe('not_found');
    const readOnly = await api.postJson(path, { profile: 'ebu-r128' }, KEYS.alphaReadOnly);
    expect(readOnly.status).toBe(403);
    expect(readOnly.body.code).toBe('forbidden');
    const unknown = await api.postJson(
      '/v1/jobs/j_000000000000000000000000/reruns',
      { profile: 'ebu-r128' },
      KEYS.alpha,
    );
    expect(unknown.status).toBe(404);
  });
});

describe('re-run of other sources', () => {
  it("re-runs a sourceUrl job from its fetched copy, named after the URL's file", async () => {
    const origin = createServer((req, res) => {
      if (req.url === '/media/quay-ident.wav')
        return createReadStream(pass).pipe(res.writeHead(200, { 'content-type': 'audio/wav' }));
      res.writeHead(404).end();
    });
    await new Promise<void>((resolve) => origin.listen(0, '127.0.0.1', resolve));
    try {
      const sourceUrl = `http://127.0.0.1:${(origin.address() as { port: number }).port}/media/quay-ident.wav`;
      const submit = await api.postJson('/v1/jobs', { sourceUrl, profile: 'ebu-r128' }, KEYS.alpha);
      expect((await finished(submit.body.id)).body.verdict).toBe('pass');
      const failedFetch = await api.postJson(
        '/v1/jobs',
        { sourceUrl: `${sourceUrl}.gone`, profile: 'ebu-r128' },
        KEYS.alpha,
      );
      expect((await finished(failedFetch.body.id)).body.error.code).toBe('source_fetch_failed');
      // The origin is gone: the re-run reads the copy the first job fetched.
      await new Promise<void>((resolve) => origin.close(() => resolve()));
      const rerun = await api.postJson(`/v1/jobs/${submit.body.id}/reruns`, { profile: 'house-loud' }, KEYS.alpha);
      expect(rerun.status).toBe(202);
      expect((await finished(rerun.body.id)).body).toMatchObject({
        verdict: 'fail',
        source: { kind: 'upload', fileName: 'quay-ident.wav' },
        rerunOf: submit.body.id,
      });
      // A failed fetch kept nothing to re-run.
      const none = await api.postJson(`/v1/jobs/${failedFetch.body.id}/reruns`, { profile: 'ebu-r128' }, KEYS.alpha);
      expect(none.status).toBe(404);
      expect(none.body.code).toBe('audio_expired');
    } finally {
      origin.close();
    }
  });

  it('re-runs a failed upload (the same bytes fail the same way)', async () => {
    const junk = join(service.dir, 'minutes.wav');
    writeFileSync(junk, 'minutes of the planning meeting, not audio\n'.repeat(40));
    const submit = await api.upload(junk, { profile: 'ebu-r128' }, KEYS.alpha);
    const first = await finished(submit.body.id);
    expect(first.body.state).toBe('failed');
    const rerun = await api.postJson(`/v1/jobs/${submit.body.id}/reruns`, { profile: 'podcast' }, KEYS.alpha);
    expect(rerun.status).toBe(202);
    const again = await finished(rerun.body.id);
    expect(again.body).toMatchObject({ state: 'failed', rerunOf: submit.body.id, profile: { id: 'podcast' } });
    expect(again.body.error.code).toBe(first.body.error.code);
    // A failed job has no verdict to sign off.
    const signOff = await api.postJson(`/v1/jobs/${submit.body.id}/signoffs`, { decision: 'reject' }, KEYS.alphaAdmin);
    expect(signOff.status).toBe(409);
    expect(signOff.body.code).toBe('signoff_not_allowed');
  });
});

describe('sign-off', () => {
  it('records accept and reject with who and when, shows them, and sends each as a signed webhook', async () => {
    // -23 LUFS against the current -16 +/-1 LU house profile: a fail verdict.
    const id = await upload('house-loud', { callbackUrl });
    await until(async () => received.some((r) => JSON.parse(r.body).job?.id === id));
    const reportBefore = await api.get(`/v1/jobs/${id}/report`, KEYS.alpha);
    expect(reportBefore.body.verdict).toBe('fail');
    expect(reportBefore.body.signOff).toBeUndefined();
    const path = `/v1/jobs/${id}/signoffs`;

    // Accepting a fail must say why.
    const bare = await api.postJson(path, { decision: 'accept', note: '   ' }, KEYS.alphaAdmin);
    expect(bare.status).toBe(400);
    expect(bare.body).toMatchObject({ code: 'validation_failed', field: 'note' });

    const accepted = await api.postJson(
      path,
      { decision: 'accept', note: 'Client asked for the quieter mix; approved by the desk.', operator: '  Desk two  ' },
      KEYS.alphaAdmin,
    );
    expect(accepted.status).toBe(201);
    const first = accepted.body.current;
    expect(first).toMatchObject({
      number: 1,
      decision: 'accept',
      verdict: 'fail',
      note: 'Client asked for the quieter mix; approved by the desk.',
      // The name the operator gave, trimmed, beside the key that signed.
      by: { tenant: 'alpha', operator: 'Desk two' },
    });
    expect(first.by.keyId).toMatch(/^[0-9a-f]{12}$/);
    expect(new Date(first.at).toISOString()).toBe(first.at);
    expect(accepted.body.history).toEqual([first]);

    // Shown in the job and in the served report, beside (not inside) the analysis.
    expect((await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body.signOff).toEqual(first);
    const reportAfter = await api.get(`/v1/jobs/${id}/report`, KEYS.alpha);
    const { signOff, ...analysis } = reportAfter.body;
    expect(signOff).toEqual(first);
    expect(analysis).toEqual(reportBefore.body);

    // The webhook: signed with the tenant's secret, its own event and delivery id, the sign-off in the body.
    const hook = await until(async () =>
      received.find((r) => r.headers['earmark-event'] === 'job.signed_off' && JSON.parse(r.body).job.id === id),
    );
    expect(verify(WEBHOOK_SECRET, String(hook.headers['earmark-signature']), hook.body, Date.now() / 1000)).toBe(true);
    expect(hook.headers['earmark-delivery']).toBe(`dlv_${id}_s1`);
    expect(JSON.parse(hook.body)).toMatchObject({
      event: 'job.signed_off',
      deliveryId: `dlv_${id}_s1`,
      signOff: first,
      job: { id, verdict: 'fail', signOff: first },
    });

    // A second sign-off replaces the first as the current one; the history keeps both.
    const rejected = await api.postJson(path, { decision: 'reject' }, KEYS.alphaAdmin);
    expect(rejected.status).toBe(201);
    expect(rejected.body.current).toMatchObject({ number: 2, decision: 'reject', note: null });
    expect(rejected.body.history.map((s: { decision: string }) => s.decision)).toEqual(['accept', 'reject']);
    expect((await api.get(path, KEYS.alphaReadOnly)).body).toEqual(rejected.body);
    await until(async () => received.some((r) => r.headers['earmark-delivery'] === `dlv_${id}_s2`));
    const view = await until(async () => {
      const res = await api.get(`/v1/jobs/${id}`, KEYS.alpha);
      const delivered = res.body.callback.deliveries.filter(
        (d: { event: string; outcome: string }) => d.event === 'job.signed_off' && d.outcome === 'delivered',
      );
      return delivered.length === 2 ? res : null;
    });
    expect(view.body.signOff).toMatchObject({ number: 2, decision: 'reject' });
  });

  it('refuses a pass verdict, an unknown job, another tenant and a key without the admin scope', async () => {
    const passed = await upload('ebu-r128');
    const refusal = await api.postJson(`/v1/jobs/${passed}/signoffs`, { decision: 'accept' }, KEYS.alphaAdmin);
    expect(refusal.status).toBe(409);
    expect(refusal.body.code).toBe('signoff_not_allowed');
    expect((await api.get(`/v1/jobs/${passed}/signoffs`, KEYS.alpha)).body).toEqual({ current: null, history: [] });

    const failed = await upload('house-loud');
    const path = `/v1/jobs/${failed}/signoffs`;
    const unknown = await api.postJson(
      '/v1/jobs/j_000000000000000000000000/signoffs',
      { decision: 'reject' },
      KEYS.alphaAdmin,
    );
    expect(unknown.status).toBe(404);
    const otherTenant = await api.postJson(path, { decision: 'reject' }, BETA_ADMIN);
    expect(otherTenant.status).toBe(404);
    expect(otherTenant.body.code).toBe('not_found');
    expect((await api.get(path, BETA_ADMIN)).status).toBe(404);
    for (const key of [KEYS.alpha, KEYS.alphaReadOnly]) {
      const res = await api.postJson(path, { decision: 'reject' }, key);
      expect(res.status).toBe(403);
      expect(res.body.code).toBe('forbidden');
    }
    expect((await api.postJson(path, { decision: 'maybe' }, KEYS.alphaAdmin)).status).toBe(400);
    expect((await api.get(path, KEYS.alpha)).body.history).toEqual([]);
  });
});

// Last: the sweep removes every stored file of this service.
describe('re-run after retention', () => {
  it('answers audio_expired (404) once the retention sweep removed the audio, and makes no job', async () => {
    const original = await upload('ebu-r128');
    expect(await service.worker?.sweep(0)).toBeGreaterThan(0);
    const res = await api.postJson(`/v1/jobs/${original}/reruns`, { profile: 'house-loud' }, KEYS.alpha);
    expect(res.status).toBe(404);
    expect(res.body.code).toBe('audio_expired');
    expect(res.body.detail).toContain('retention');
    expect((await api.get(`/v1/jobs/${original}`, KEYS.alpha)).body.reruns).toEqual([]);
  });
});

describe('before the job has finished', () => {
  it('refuses a re-run (job_not_finished) and a sign-off (signoff_not_allowed) while it is queued', async () => {
    // An API without a worker: the job stays queued.
    const idle = await startService({ worker: false });
    try {
      const idleApi = client(idle.url);
      const wav = await writeSine(join(idle.dir, 'waiting.wav'), -23, 1);
      const submit = await idleApi.upload(wav, { profile: 'ebu-r128' }, KEYS.alpha);
      expect(submit.status).toBe(202);
      const rerun = await idleApi.postJson(`/v1/jobs/${submit.body.id}/reruns`, { profile: 'podcast' }, KEYS.alpha);
      expect(rerun.status).toBe(409);
      expect(rerun.body.code).toBe('job_not_finished');
      const signOff = await idleApi.postJson(
        `/v1/jobs/${submit.body.id}/signoffs`,
        { decision: 'reject' },
        KEYS.alphaAdmin,
      );
      expect(signOff.status).toBe(409);
      expect(signOff.body.code).toBe('signoff_not_allowed');
    } finally {
      await idle.close();
    }
  });
});
