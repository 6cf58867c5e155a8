// End-to-end journeys against a real HTTP server, real Redis and a real worker (sandboxed
// analysis in child processes). Every response is checked against openapi/openapi.yaml.

import { createServer, type IncomingMessage, type Server } from 'node:http';
import { createHash } from 'node:crypto';
import { createReadStream, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildItem, CORPUS_SAMPLE_RATE } from '../../fixtures/dialogue-corpus.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { verify } from '../../src/worker/webhooks.ts';
import { hasTool } from '../helpers/tools.ts';
import { toFlac, writeSine } from './audio.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, WEBHOOK_SECRET, type TestService } from './harness.ts';

let service: TestService;
let api: Client;
let files: { pass: string; loud: string; flacLoud: string; junk: string; big: string };

async function finished(id: string, key = KEYS.alpha) {
  return until(async () => {
    const res = await api.get(`/v1/jobs/${id}`, key);
    return res.body.state === 'completed' || res.body.state === 'failed' ? res : null;
  });
}

beforeAll(async () => {
  service = await startService();
  api = client(service.url);
  const dir = service.dir;
  files = {
    // 997 Hz stereo sine at -23 dBFS peak reads -23.0 LUFS (ITU-R BS.1770-5): EBU R 128 target, pass.
    pass: await writeSine(join(dir, 'pass.wav'), -23, 6),
    // At -0.5 dBFS peak: -0.5 LUFS (far above -23 +/-1 LU) and true peak about -0.5 dBTP (> -1 dBTP): fail.
    loud: await writeSine(join(dir, 'loud.wav'), -0.5, 6),
    flacLoud: '',
    junk: join(dir, 'notes.wav'),
    big: join(dir, 'big.wav'),
  };
  files.flacLoud = toFlac(files.loud, join(dir, 'loud.flac'));
  writeFileSync(files.junk, 'these are meeting notes, not audio\n'.repeat(40));
  writeFileSync(files.big, Buffer.alloc(6 * 1024 * 1024, 7));
});

afterAll(async () => {
  await service?.close();
});

describe('upload and report', () => {
  it('a WAV within EBU R 128 passes; the report names profile and version', async () => {
    const submit = await api.upload(files.pass, { profile: 'ebu-r128', externalId: 'ext-001' }, KEYS.alpha);
    expect(submit.status).toBe(202);
    expect(submit.headers.location).toBe(`/v1/jobs/${submit.body.id}`);
    const done = await finished(submit.body.id);
    expect(done.body).toMatchObject({
      state: 'completed',
      verdict: 'pass',
      progressPercent: 100,
      externalId: 'ext-001',
      profile: { id: 'ebu-r128', version: '1.0.0' },
    });
    const report = await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha);
    expect(report.status).toBe(200);
    expect(report.body.verdict).toBe('pass');
    expect(report.body.profile).toMatchObject({ id: 'ebu-r128', version: '1.0.0' });
    // BS.1770-5: -23 dBFS peak stereo 997 Hz sine = -23.0 LUFS (the README's accuracy figures allow 0.05 LU here).
    expect(report.body.summary.integratedLufs).toBeCloseTo(-23, 1);
    expect(report.body.file.name).toBe('pass.wav');
    // The hash the API took while storing the upload, carried to the worker: the bytes' own SHA-256.
    expect(report.body.file.sha256).toBe(createHash('sha256').update(readFileSync(files.pass)).digest('hex'));
    // Identical L and R: dual mono, shown as a remark that leaves the verdict a pass.
    expect(report.body.flags.map((f: { kind: string; severity: string }) => [f.kind, f.severity])).toEqual([
      ['duplicate_channel', 'remark'],
    ]);
  });

  it('a loud FLAC fails loudness and true peak, with true-peak flags', async () => {
    const submit = await api.upload(files.flacLoud, { profile: 'ebu-r128' }, KEYS.alpha);
    expect(submit.status).toBe(202);
    const done = await finished(submit.body.id);
    expect(done.body).toMatchObject({ state: 'completed', verdict: 'fail' });
    const report = (await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha)).body;
    expect(report.format.container).toBe('flac');
    const failed = report.checks
      .filter((c: { passed: boolean }) => !c.passed)
      .map((c: { ruleId: string }) => c.ruleId)
      .sort();
    expect(failed).toEqual(['programme-loudness', 'true-peak']);
    // A sine's true peak is at least its sample peak (BS.1770-5 Annex 2): about -0.5 dBTP, above the -1 dBTP ceiling of R 128.
    expect(report.summary.truePeakDbtp).toBeGreaterThan(-1);
    expect(report.flags.some((f: { kind: string }) => f.kind === 'true_peak_over')).toBe(true);
  });

  it.skipIf(!hasTool('espeak-ng'))(
    'speech over music against the dialogue-anchored profile: the worker runs the speech detector and judges dialogue',
    async () => {
      const item = buildItem({
        name: 'promo-voice',
        seconds: 12,
        bed: 'music',
        speechAboveBedDb: 12,
        speech: true,
        gapSeconds: [0.4, 1.2],
        seed: 41,
      });
      const path = join(service.dir, 'promo-voice.wav');
      await writeWavFile(path, { sampleRate: CORPUS_SAMPLE_RATE, channels: 1, bitsPerSample: 24, float: false }, [
        [item.mix],
      ]);
      const submit = await api.upload(path, { profile: 'streaming-dialogue-anchored' }, KEYS.alpha);
      expect(submit.status).toBe(202);
      const done = await finished(submit.body.id);
      expect(done.body.state).toBe('completed');
      const report = (await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha)).body;
      // The truth: the mix over the blocks inside the placed speech, BS.1770-5 gates (fixtures/dialogue-truth.ts).
      expect(report.dialogue.measured).toBe(true);
      expect(Math.abs(report.dialogue.dialogueLufs - (item.truth.dialogueLufs ?? 0))).toBeLessThan(1);
      expect(report.series.speech.isSpeech).toContain(1);
      const anchor = report.checks.find((c: { ruleId: string }) => c.ruleId === 'anchor-loudness');
      expect(anchor.measured).toBe(report.dialogue.dialogueLufs);
      expect(anchor.explanation).toContain('anchored on dialogue');
    },
  );

  it('a text file named .wav ends as a failed job with unsupported_format, without retries', async () => {
    const submit = await api.upload(files.junk, { profile: 'ebu-r128' }, KEYS.alpha);
    const done = await finished(submit.body.id);
    expect(done.body.state).toBe('failed');
    expect(done.body.error).toMatchObject({ code: 'unsupported_format' });
    // The message names the client's file, never the storage path.
    expect(done.body.error.message).toContain('notes.wav');
    expect(done.body.error.message).not.toContain(service.dir);
    expect(done.body.attemptsMade).toBe(1);
    const report = await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha);
    expect(report.status).toBe(409);
    expect(report.body.code).toBe('report_not_ready');
  });

  it('an upload over EARMARK_UPLOAD_LIMIT_BYTES is refused with 413 and nothing is kept', async () => {
    const res = await api.upload(files.big, { profile: 'ebu-r128' }, KEYS.alpha);
    expect(res.status).toBe(413);
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect(res.body.code).toBe('payload_too_large');
    expect(JSON.stringify(res.body)).not.toMatch(/\/tmp|at .*\.ts/);
    const { readdirSync } = await import('node:fs');
    expect(readdirSync(join(service.dir, 'tmp'))).toEqual([]);
  });

  it('bad requests get typed problems: unknown profile 422, missing file 400, no key 401', async () => {
    expect((await api.upload(files.pass, { profile: 'no-such-profile' }, KEYS.alpha)).body.code).toBe(
      'unknown_profile',
    );
    const noFile = await api.postJson('/v1/jobs', { profile: 'ebu-r128' }, KEYS.alpha);
    expect(noFile.status).toBe(400);
    expect(noFile.body).toMatchObject({ code: 'validation_failed', field: 'sourceUrl' });
    expect((await api.get('/v1/jobs', undefined)).status).toBe(401);
    expect((await api.get('/v1/jobs', 'not-a-configured-key-at-all')).body.code).toBe('unauthorized');
  });
});

describe('direct uploads', () => {
  it('need the object-store backend: 501 direct_upload_unavailable on the file backend', async () => {
    const res = await api.postJson('/v1/uploads', { fileName: 'a.wav', sizeBytes: 1000 }, KEYS.alpha);
    expect(res.status).toBe(501);
    expect(res.body.code).toBe('direct_upload_unavailable');
    const unknown = await api.postJson(
      '/v1/jobs',
      { uploadId: `u_${'0'.repeat(24)}`, profile: 'ebu-r128' },
      KEYS.alpha,
    );
    expect(unknown.status).toBe(404);
  });
});

describe('sourceUrl', () => {
  let origin: Server;
  let originUrl: string;
  beforeAll(async () => {
    origin = createServer((req, res) => {
      if (req.url === '/media/pass.wav')
        return createReadStream(files.pass).pipe(res.writeHead(200, { 'content-type': 'audio/wav' }));
      res.writeHead(404).end();
    });
    await new Promise<void>((resolve) => origin.listen(0, '127.0.0.1', resolve));
    originUrl = `http://127.0.0.1:${(origin.address() as { port: number }).port}`;
  });
  afterAll(() => new Promise<void>((resolve) => origin.close(() => resolve())));

  it('fetches an allowlisted local URL and analyses it', async () => {
    const submit = await api.postJson(
      '/v1/jobs',
      { sourceUrl: `${originUrl}/media/pass.wav`, profile: 'ebu-r128', metadata: { desk: 'ingest-2' } },
      KEYS.alpha,
    );
    expect(submit.status).toBe(202);
    const done = await finished(submit.body.id);
    expect(done.body).toMatchObject({
      state: 'completed',
      verdict: 'pass',
      source: { kind: 'url' },
      metadata: { desk: 'ingest-2' },
    });
    const report = (await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha)).body;
    expect(report.file.sha256).toBe(createHash('sha256').update(readFileSync(files.pass)).digest('hex'));
  });

  it('a 404 from the origin fails the job with source_fetch_failed', async () => {
    const submit = await api.postJson(
      '/v1/jobs',
      { sourceUrl: `${originUrl}/media/missing.wav`, profile: 'ebu-r128' },
      KEYS.alpha,
    );
    const done = await finished(submit.body.id);
    expect(done.body.error).toMatchObject({ code: 'source_fetch_failed' });
    // A 404 is the origin's answer, not a transient fault: no retry.
    expect(done.body.attemptsMade).toBe(1);
  });

  it('refuses link-local and private addresses that are not allowlisted', async () => {
    const metadataService = await api.postJson(
      '/v1/jobs',
      { sourceUrl: 'http://169.254.169.254/latest', profile: 'ebu-r128' },
      KEYS.alpha,
    );
    expect(metadataService.status).toBe(422);
    expect(metadataService.body).toMatchObject({ code: 'source_refused', field: 'sourceUrl' });
    const privateNet = await api.postJson(
      '/v1/jobs',
      { sourceUrl: 'http://10.1.2.3/a.wav', profile: 'ebu-r128' },
      KEYS.alpha,
    );
    expect(privateNet.body.code).toBe('source_refused');
    const scheme = await api.postJson('/v1/jobs', { sourceUrl: 'file:///etc/passwd', profile: 'ebu-r128' }, KEYS.alpha);
    expect(scheme.body.code).toBe('source_refused');
  });
});

describe('idempotency', () => {
  it('the same Idempotency-Key returns the first job; a different request with it is a conflict', async () => {
    const headers = { 'idempotency-key': `idem-${Date.now()}` };
    const first = await api.upload(files.pass, { profile: 'ebu-r128' }, KEYS.alpha, headers);
    const second = await api.upload(files.pass, { profile: 'ebu-r128' }, KEYS.alpha, headers);
    expect(first.status).toBe(202);
    expect(second.status).toBe(200);
    expect(second.body).toMatchObject({ id: first.body.id, duplicate: true });
    const other = await api.upload(files.loud, { profile: 'ebu-r128' }, KEYS.alpha, headers);
    expect(other.status).toBe(409);
    expect(other.body.code).toBe('idempotency_conflict');
    // The same key from another tenant is that tenant's own key.
    const beta = await api.upload(files.pass, { profile: 'ebu-r128' }, KEYS.beta, headers);
    expect(beta.status).toBe(202);
    expect(beta.body.id).not.toBe(first.body.id);
    await finished(first.body.id);
    await finished(beta.body.id, KEYS.beta);
  });
});

describe('tenants and scopes', () => {
  it('another tenant gets 404 for a job; a read-only key cannot submit; only admin edits profiles', async () => {
    const submit = await api.upload(files.pass, { profile: 'ebu-r128' }, KEYS.alpha);
    const id = submit.body.id;
    expect((await api.get(`/v1/jobs/${id}`, KEYS.beta)).status).toBe(404);
    expect((await api.get(`/v1/jobs/${id}/report`, KEYS.beta)).body.code).toBe('not_found');
    expect((await api.get(`/v1/jobs/${id}`, KEYS.alphaReadOnly)).status).toBe(200);
    const listed = await api.get('/v1/jobs?limit=100', KEYS.beta);
    expect(listed.body.items.map((j: { id: string }) => j.id)).not.toContain(id);
    const readOnlySubmit = await api.upload(files.pass, { profile: 'ebu-r128' }, KEYS.alphaReadOnly);
    expect(readOnlySubmit.status).toBe(403);
    expect(readOnlySubmit.body.code).toBe('forbidden');
    expect((await api.put('/v1/profiles/house-a', {}, KEYS.alpha)).status).toBe(403);
    expect((await api.get('/metrics', KEYS.alpha)).status).toBe(403);
    await finished(id);
  });
});

describe('profiles', () => {
  const house = (targetLufs: number) => ({
    name: 'House loudness',
    version: '0.0.1',
    description: 'Invented house rule for the tests',
    basis: 'house rule',
    rules: [{ id: 'loudness', type: 'integrated-loudness', severity: 'fail', targetLufs, toleranceLu: 1 }],
  });

  it('create, update (new version), report naming the version, delete; built-ins read-only', async () => {
    const v1 = await api.put('/v1/profiles/house-loud', house(-23), KEYS.alphaAdmin);
    expect(v1.status).toBe(200);
    expect(v1.body).toMatchObject({ builtin: false, versions: 1, profile: { id: 'house-loud', version: '1.0.0' } });
    const v2 = await api.put('/v1/profiles/house-loud', house(-16), KEYS.alphaAdmin);
    expect(v2.body).toMatchObject({ versions: 2, profile: { version: '2.0.0' } });
    expect((await api.get('/v1/profiles/house-loud', KEYS.alpha)).body.profile.rules[0].targetLufs).toBe(-16);
    expect((await api.get('/v1/profiles/house-loud', KEYS.beta)).status).toBe(404);
    const list = await api.get('/v1/profiles', KEYS.alpha);
    expect(list.body.items.map((e: { profile: { id: string } }) => e.profile.id)).toEqual(
      expect.arrayContaining(['ebu-r128', 'house-loud']),
    );

    // -23 LUFS against a -16 +/-1 LU target (version 2): fail, and the report says version 2.
    const submit = await api.upload(files.pass, { profile: 'house-loud' }, KEYS.alpha);
    const done = await finished(submit.body.id);
    expect(done.body).toMatchObject({ verdict: 'fail', profile: { id: 'house-loud', version: '2.0.0' } });
    expect((await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha)).body.profile.version).toBe('2.0.0');

    expect((await api.del('/v1/profiles/house-loud', KEYS.alphaAdmin)).status).toBe(204);
    expect((await api.get('/v1/profiles/house-loud', KEYS.alpha)).status).toBe(404);
    expect((await api.upload(files.pass, { profile: 'house-loud' }, KEYS.alpha)).status).toBe(422);
    expect((await api.put('/v1/profiles/ebu-r128', house(-23), KEYS.alphaAdmin)).body.code).toBe('forbidden');
  });

  it('an invalid profile is a 400 naming the field', async () => {
    const bad = { ...house(-23), rules: [{ id: 'tp', type: 'true-peak', severity: 'fail', maxDbtp: 'minus one' }] };
    const res = await api.put('/v1/profiles/house-bad', bad, KEYS.alphaAdmin);
    expect(res.status).toBe(400);
    expect(res.body).toMatchObject({ code: 'invalid_profile', field: 'rules[0].maxDbtp' });
  });
});

describe('webhooks', () => {
  it('delivers a signed callback, retrying after the receiver first fails, with one delivery id', async () => {
    const received: Array<{ headers: IncomingMessage['headers']; body: string; answered: number }> = [];
    const receiver = createServer((req, res) => {
      let body = '';
      req.on('data', (c) => {
        body += c;
      });
      req.on('end', () => {
        const answered = received.length === 0 ? 500 : 204;
        received.push({ headers: req.headers, body, answered });
        res.writeHead(answered).end();
      });
    });
    await new Promise<void>((resolve) => receiver.listen(0, '127.0.0.1', resolve));
    const callbackUrl = `http://127.0.0.1:${(receiver.address() as { port: number }).port}/hooks/qc`;
    try {
      const submit = await api.upload(files.pass, { profile: 'ebu-r128', callbackUrl }, KEYS.alpha);
      await finished(submit.body.id);
      const job = await until(async () => {
        const res = await api.get(`/v1/jobs/${submit.body.id}`, KEYS.alpha);
        return res.body.callback.deliveries.some((d: { outcome: string }) => d.outcome === 'delivered') ? res : null;
      });
      expect(received).toHaveLength(2);
      const [first, second] = received;
      expect(first.headers['earmark-delivery']).toBe(second.headers['earmark-delivery']);
      for (const r of received) {
        expect(
          verify(WEBHOOK_SECRET, String(r.headers['earmark-signature']), r.body, Math.floor(Date.now() / 1000)),
        ).toBe(true);
        expect(
          verify(
            'some-other-secret-value-000',
            String(r.headers['earmark-signature']),
            r.body,
            Math.floor(Date.now() / 1000),
          ),
        ).toBe(false);
      }
      const payload = JSON.parse(second.body);
      expect(payload).toMatchObject({
        event: 'job.completed',
        job: { id: submit.body.id, verdict: 'pass', state: 'completed' },
      });
      expect(
        job.body.callback.deliveries.map((d: { outcome: string; statusCode: number }) => [d.outcome, d.statusCode]),
      ).toEqual([
        ['retrying', 500],
        ['delivered', 204],
      ]);
    } finally {
      await new Promise<void>((resolve) => receiver.close(() => resolve()));
    }
  });
});

describe('listing, queue, health, metrics', () => {
  it('lists newest first with cursor pagination and filters', async () => {
    const all = (await api.get('/v1/jobs?limit=100', KEYS.alpha)).body.items as Array<{
      id: string;
      createdAt: string;
      verdict: string | null;
      state: string;
    }>;
    expect(all.length).toBeGreaterThanOrEqual(5);
    const created = all.map((j) => j.createdAt);
    expect([...created].sort().reverse()).toEqual(created);
    const seen: string[] = [];
    let cursor: string | null = null;
    do {
      const page = await api.get(`/v1/jobs?limit=2${cursor ? `&cursor=${cursor}` : ''}`, KEYS.alpha);
      expect(page.body.items.length).toBeLessThanOrEqual(2);
      seen.push(...page.body.items.map((j: { id: string }) => j.id));
      cursor = page.body.nextCursor;
    } while (cursor);
    expect(seen).toEqual(all.map((j) => j.id));
    const failed = (await api.get('/v1/jobs?state=failed&limit=100', KEYS.alpha)).body.items;
    expect(failed.length).toBeGreaterThan(0);
    expect(failed.every((j: { state: string }) => j.state === 'failed')).toBe(true);
    const passes = (await api.get('/v1/jobs?verdict=pass&profile=ebu-r128&limit=100', KEYS.alpha)).body.items;
    expect(
      passes.every(
        (j: { verdict: string; profile: { id: string } }) => j.verdict === 'pass' && j.profile.id === 'ebu-r128',
      ),
    ).toBe(true);
    expect((await api.get('/v1/jobs?limit=0', KEYS.alpha)).body.code).toBe('validation_failed');
    expect((await api.get('/v1/jobs?cursor=bm9wZQ', KEYS.alpha)).body.field).toBe('cursor');
  });

  it('queue counts, health, readiness, metrics and the OpenAPI document', async () => {
    const queue = await api.get('/v1/queue', KEYS.alpha);
    expect(queue.body.workers).toBeGreaterThanOrEqual(1);
    expect(queue.body.completed).toBeGreaterThan(0);
    expect(queue.body.finishedLastMinute).toBeGreaterThan(0);
    expect((await api.get('/healthz')).body.status).toBe('ok');
    expect((await api.get('/readyz')).body).toEqual({ status: 'ok', redis: true, storage: true });
    // /metrics needs the metrics scope, which admin does not include (contents: tenant-visibility.test.ts).
    expect((await api.get('/metrics', KEYS.alphaAdmin)).status).toBe(403);
    expect((await api.get('/openapi.json')).body.openapi).toBe('3.1.0');
    // An unknown route is not in the document, so it is checked by hand: still problem+json.
    const { default: request } = await import('supertest');
    const unknown = await request(service.url).get('/v1/nothing-here').set('authorization', `Bearer ${KEYS.alpha}`);
    expect(unknown.status).toBe(404);
    expect(unknown.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect(unknown.body.code).toBe('not_found');
  });
});
