// Delivery packages through the service: a mix and its stems uploaded as jobs, submitted as one
// package while they are still queued, checked by the worker once they finish (real API, worker
// and Redis; every response checked against the OpenAPI document).
import { createServer, type Server, type ServerResponse } from 'node:http';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { verify } from '../../src/worker/webhooks.ts';
import { writeStemSet } from '../helpers/stem-files.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, WEBHOOK_SECRET, type TestService } from './harness.ts';

const PROFILE = 'house-stems';
const RATE = 48_000;
let service: TestService;
let api: Client;
let receiver: Server;
let callbackUrl = '';
const received: string[] = [];

async function upload(path: string): Promise<string> {
  const res = await api.upload(path, { profile: PROFILE }, KEYS.alpha);
  expect(res.status).toBe(202);
  return res.body.id;
}

async function uploadSet(set: { stems: string[]; mix: string }) {
  return [
    { jobId: await upload(set.mix), role: 'mix' },
    ...(await Promise.all(set.stems.map(async (s) => ({ jobId: await upload(s), role: 'stem' })))),
  ];
}

async function settled(id: string) {
  return until(async () => {
    const res = await api.get(`/v1/packages/${id}`, KEYS.alpha);
    expect(res.status).toBe(200);
    return res.body.state === 'completed' || res.body.state === 'failed' ? res.body : null;
  });
}

let good: { jobId: string; role: string }[];
let muted: { jobId: string; role: string }[];

beforeAll(async () => {
  // Members are waited for: a short package wait keeps the test of its bound quick.
  service = await startService({ env: { EARMARK_PACKAGE_WAIT_MS: '60000' } });
  api = client(service.url);
  receiver = createServer((req, res) => {
    let body = '';
    req.on('data', (c) => {
      body += c;
    });
    req.on('end', () => {
      if (verify(WEBHOOK_SECRET, String(req.headers['earmark-signature']), body, Math.floor(Date.now() / 1000)))
        received.push(body);
      res.writeHead(204).end();
    });
  });
  await new Promise<void>((resolve) => receiver.listen(0, '127.0.0.1', resolve));
  callbackUrl = `http://127.0.0.1:${(receiver.address() as { port: number }).port}/hooks/packages`;
  // A house profile the generated sines meet (true peak under 0 dBTP), so the set checks decide.
  const put = await api.put(
    `/v1/profiles/${PROFILE}`,
    {
      name: 'House stems',
      version: '1.0.0',
      description: 'Test profile: only a true-peak ceiling.',
      basis: 'house rule',
      rules: [{ id: 'peak', type: 'true-peak', severity: 'fail', maxDbtp: 0, source: 'house rule' }],
    },
    KEYS.alphaAdmin,
  );
  expect(put.status).toBe(200);
  good = await uploadSet(await writeStemSet({ dir: service.dir, seconds: 3, prefix: 'good-' }));
  muted = await uploadSet(
    await writeStemSet({
      dir: service.dir,
      seconds: 3,
      prefix: 'muted-',
      mute: { stem: 0, startFrame: 1.25 * RATE, endFrame: 1.75 * RATE },
    }),
  );
});

afterAll(async () => {
  await service?.close();
  await new Promise<void>((resolve) => receiver?.close(() => resolve()));
});

describe('POST /v1/packages, GET /v1/packages/:id', () => {
  it('a mix and stems that sum to it: pass, with the residual and every member verdict', async () => {
    const submit = await api.postJson('/v1/packages', { profile: PROFILE, members: good, callbackUrl }, KEYS.alpha);
    expect(submit.status).toBe(202);
    expect(submit.headers.location).toBe(`/v1/packages/${submit.body.id}`);
    expect(submit.body.members.map((m: { role: string }) => m.role)).toEqual(['mix', 'stem', 'stem', 'stem']);
    const done = await settled(submit.body.id);
    expect(done.state).toBe('completed');
    expect(done.verdict).toBe('pass');
    expect(done.headline).toBe('PASS: 4 files agree and each meets its profile');
    expect(done.members.map((m: { fileName: string; verdict: string }) => [m.fileName, m.verdict])).toEqual([
      ['good-mix.wav', 'pass'],
      ['good-stem-1.wav', 'pass'],
      ['good-stem-2.wav', 'pass'],
      ['good-stem-3.wav', 'pass'],
    ]);
    expect(done.set.checks.every((c: { passed: boolean }) => c.passed)).toBe(true);
    expect(done.set.members[0]).toMatchObject({ sampleRate: 48_000, depth: '32-bit float', frames: 144_000 });
    // Float32 stems summed in float64 against their float32 sum: only rounding is left, far
    // under the default tolerance of -60 dB (the CLI's test reads -14x dB for the same files).
    expect(done.residual.toleranceDb).toBe(-60);
    expect(done.residual.residualRelativeDb).toBeLessThan(-140);
    expect(done.residual.withinTolerance).toBe(true);
    expect(done.residualSpans).toEqual([]);
    const report = await api.get(done.links.report, KEYS.alphaReadOnly);
    expect(report.status).toBe(200);
    expect(report.body.members).toHaveLength(4);
    expect(report.body.verdict).toBe('pass');
    // package.completed to the callback, signed with the tenant's secret.
    const hook = await until(async () => received.find((b) => b.includes(submit.body.id)));
    expect(JSON.parse(hook)).toMatchObject({
      event: 'package.completed',
      package: { id: submit.body.id, state: 'completed', verdict: 'pass' },
    });
    const delivered = await until(async () => {
      const res = await api.get(`/v1/packages/${submit.body.id}`, KEYS.alpha);
      return res.body.callback.deliveries.length > 0 ? res.body.callback.deliveries : null;
    });
    expect(delivered[0]).toMatchObject({ event: 'package.completed', outcome: 'delivered', statusCode: 204 });
  });

  it('a stem with a muted section: fail, with the span in seconds and timecode', async () => {
    const submit = await api.postJson('/v1/packages', { profile: PROFILE, members: muted }, KEYS.alpha);
    expect(submit.status).toBe(202);
    const done = await settled(submit.body.id);
    expect(done.verdict).toBe('fail');
    expect(done.headline).toMatch(/^FAIL: the stems do not sum to the mix \(residual -\d+\.\d dB relative to the mix/);
    expect(done.set.checks.find((c: { id: string }) => c.id === 'stems_sum_to_mix').passed).toBe(false);
    // 0.1 s windows: the mute 1.25 - 1.75 s lies in the windows 1.2 - 1.8 s; 1.2 s at 25 fps is frame 5.
    expect(done.residualSpans[0]).toMatchObject({
      startSeconds: 1.2,
      endSeconds: 1.8,
      startTimecode: '00:00:01:05',
      endTimecode: '00:00:01:20',
    });
    // The residual is the muted part of stem 1 (220 Hz, amplitude 0.2) for 0.5 s of 3 s. A sine of
    // amplitude A has mean square A^2/2 over whole cycles (handbook fact), and the three stems' sines
    // are orthogonal over the 3 s, so the mix's mean square is (0.2^2 + 0.1^2 + 0.05^2)/2 = 0.02625
    // and the residual's 0.02 * (0.5/3): 10 log10(0.003333/0.02625) = -8.96 dB relative to the mix.
    expect(done.residual.residualRelativeDb).toBeCloseTo(-8.96, 1);
    // Each file alone meets its profile: only the set fails.
    expect(done.members.every((m: { verdict: string }) => m.verdict === 'pass')).toBe(true);
  });

  it('a member whose own check failed fails the package, naming it', async () => {
    const broken = join(service.dir, 'broken-version.wav');
    writeFileSync(broken, 'not audio at all, only words'.repeat(20));
    const members = [
      { jobId: good[0].jobId, role: 'version' },
      { jobId: await upload(broken), role: 'version' },
    ];
    const submit = await api.postJson('/v1/packages', { profile: PROFILE, members, callbackUrl }, KEYS.alpha);
    expect(submit.status).toBe(202);
    const done = await settled(submit.body.id);
    expect(done.state).toBe('failed');
    const hook = await until(async () => received.find((b) => b.includes(submit.body.id)));
    expect(JSON.parse(hook)).toMatchObject({
      event: 'package.failed',
      deliveryId: `dlv_${submit.body.id}_f`,
      package: { id: submit.body.id, state: 'failed', error: { code: 'package_member_failed' } },
    });
    expect(done.verdict).toBeNull();
    expect(done.error.code).toBe('package_member_failed');
    expect(done.error.message).toContain(
      `the version broken-version.wav (job ${members[1].jobId}) failed its own check`,
    );
    expect(done.members[1]).toMatchObject({ fileName: 'broken-version.wav', state: 'failed', verdict: null });
  });

  it('refusals as problem+json: another tenant, unknown job, two mixes, repeats, another profile', async () => {
    const post = (body: unknown, key = KEYS.alpha) => api.postJson('/v1/packages', body, key);
    const problem = (res: { status: number; headers: Record<string, string>; body: { code: string } }) => {
      expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
      return [res.status, res.body.code];
    };
    // beta cannot name alpha's jobs: they answer as missing ones.
    expect(problem(await post({ profile: PROFILE, members: good }, KEYS.beta))).toEqual([422, 'unknown_profile']);
    expect(problem(await post({ profile: 'ebu-r128', members: good }, KEYS.beta))).toEqual([404, 'not_found']);
    const unknown = [good[0], { jobId: `j_${'0'.repeat(24)}`, role: 'stem' }];
    const missing = await post({ profile: PROFILE, members: unknown });
    expect(problem(missing)).toEqual([404, 'not_found']);
    expect(missing.body).toMatchObject({ field: 'members.1.jobId' });
    const twoMixes = await post({ profile: PROFILE, members: [good[0], { ...muted[0] }, good[1]] });
    expect(problem(twoMixes)).toEqual([400, 'invalid_argument']);
    expect(twoMixes.body.detail).toBe('a package has at most one mix');
    expect(problem(await post({ profile: PROFILE, members: [good[1], good[2]] }))).toEqual([400, 'invalid_argument']);
    expect(problem(await post({ profile: PROFILE, members: [good[0], good[0]] }))).toEqual([400, 'invalid_argument']);
    expect(problem(await post({ profile: PROFILE, members: [good[0]] }))).toEqual([400, 'invalid_argument']);
    const other = await post({ profile: 'ebu-r128', members: good });
    expect(problem(other)).toEqual([400, 'invalid_argument']);
    expect(other.body.detail).toContain('was checked against profile "house-stems", not "ebu-r128"');
    expect(problem(await post({ profile: PROFILE, members: good, toleranceDb: 3 }))).toEqual([
      400,
      'validation_failed',
    ]);
    expect((await post({ profile: PROFILE, members: good }, KEYS.alphaReadOnly)).status).toBe(403);
    expect((await api.postJson('/v1/packages', { profile: PROFILE, members: good })).status).toBe(401);
    // The same Idempotency-Key: the first package again (200); with another body, a conflict.
    const key = { 'Idempotency-Key': 'package-once-0001' };
    const first = await api.postJson('/v1/packages', { profile: PROFILE, members: good }, KEYS.alpha, key);
    expect(first.status).toBe(202);
    const again = await api.postJson('/v1/packages', { profile: PROFILE, members: good }, KEYS.alpha, key);
    expect([again.status, again.body.id]).toEqual([200, first.body.id]);
    const changed = await api.postJson('/v1/packages', { profile: PROFILE, members: muted }, KEYS.alpha, key);
    expect(problem(changed)).toEqual([409, 'idempotency_conflict']);
    // Another tenant's package, and a malformed id.
    const mine = await post({ profile: PROFILE, members: good });
    expect(problem(await api.get(`/v1/packages/${mine.body.id}`, KEYS.beta))).toEqual([404, 'not_found']);
    expect(problem(await api.get('/v1/packages/p_nope', KEYS.alpha))).toEqual([400, 'validation_failed']);
  });
});

describe('the package wait', () => {
  it('a member still running when the wait ends fails the package, naming it', async () => {
    // An origin that never answers keeps its job fetching (active) for as long as the test runs.
    const held: ServerResponse[] = [];
    const origin = createServer((_req, res) => held.push(res));
    await new Promise<void>((resolve) => origin.listen(0, '127.0.0.1', resolve));
    const impatient = await startService({
      env: { EARMARK_PACKAGE_WAIT_MS: '300', EARMARK_SHUTDOWN_TIMEOUT_MS: '500' },
    });
    try {
      const other = client(impatient.url);
      const port = (origin.address() as { port: number }).port;
      const slow = await other.postJson(
        '/v1/jobs',
        { profile: 'ebu-r128', sourceUrl: `http://127.0.0.1:${port}/slow-version.wav` },
        KEYS.alpha,
      );
      expect(slow.status).toBe(202);
      const quick = await other.upload(join(service.dir, 'good-mix.wav'), { profile: 'ebu-r128' }, KEYS.alpha);
      const members = [
        { jobId: quick.body.id, role: 'version' },
        { jobId: slow.body.id, role: 'version' },
      ];
      const submit = await other.postJson('/v1/packages', { profile: 'ebu-r128', members }, KEYS.alpha);
      expect(submit.status).toBe(202);
      const done = await until(async () => {
        const res = await other.get(`/v1/packages/${submit.body.id}`, KEYS.alpha);
        return res.body.state === 'failed' ? res.body : null;
      });
      expect(done.error.code).toBe('package_wait_exceeded');
      expect(done.error.message).toContain(`the version job ${slow.body.id} had not finished`);
      expect(done.members[1]).toMatchObject({ fileName: 'slow-version.wav', state: 'active' });
    } finally {
      for (const res of held) res.destroy();
      await impatient.close();
      await new Promise<void>((resolve) => origin.close(() => resolve()));
    }
  });
});
