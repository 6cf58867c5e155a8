// The storage journeys on the S3 backend: a real S3-protocol server (s3rver on loopback, a bucket
// per run), the API and the worker each with a local folder of its own, so they share nothing
// but Redis and the bucket. Every response is checked against openapi/openapi.yaml.

import { ListObjectsV2Command } from '@aws-sdk/client-s3';
import { createHash } from 'node:crypto';
import { createServer, type Server } from 'node:http';
import { createReadStream, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createS3Client } from '../../src/storage/s3.ts';
import { startS3Server, type TestS3 } from '../helpers/s3-server.ts';
import { writeSine } from './audio.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, type TestService } from './harness.ts';

let s3: TestS3;
let service: TestService;
let api: Client;
let inputs: string;
let files: { pass: string; big: string };

const sha256Of = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');

async function finished(id: string) {
  return until(async () => {
    const res = await api.get(`/v1/jobs/${id}`, KEYS.alpha);
    return res.body.state === 'completed' || res.body.state === 'failed' ? res : null;
  });
}

/** The object keys under the service's prefix in one folder of the bucket. */
async function objectsIn(folder: 'uploads' | 'reports'): Promise<string[]> {
  const location = service.config.storage;
  if (location.kind !== 's3') throw new Error('expected the S3 backend');
  const s3Client = createS3Client(location);
  try {
    const page = await s3Client.send(
      new ListObjectsV2Command({ Bucket: location.bucket, Prefix: `${location.prefix}/${folder}/` }),
    );
    return (page.Contents ?? []).map((item) => item.Key ?? '');
  } finally {
    s3Client.destroy();
  }
}

/** Files left in a service folder (temp copies are released after each job and excerpt). */
const filesUnder = (dir: string) =>
  readdirSync(dir, { recursive: true, withFileTypes: true }).filter((entry) => entry.isFile());

beforeAll(async () => {
  s3 = await startS3Server();
  service = await startService({ s3, env: { EARMARK_S3_SOURCE_BUCKETS: `${s3.bucket}-drop` } });
  api = client(service.url);
  inputs = mkdtempSync(join(tmpdir(), 'earmark-s3-inputs-'));
  files = {
    // 997 Hz stereo sine at -23 dBFS peak reads -23.0 LUFS (ITU-R BS.1770-5): EBU R 128 target, pass.
    pass: await writeSine(join(inputs, 'pass.wav'), -23, 6),
    big: join(inputs, 'big.wav'),
  };
  writeFileSync(files.big, Buffer.alloc(6 * 1024 * 1024, 7));
});

afterAll(async () => {
  await service?.close();
  await s3?.close();
  rmSync(inputs, { recursive: true, force: true });
});

describe('on the S3 backend', () => {
  it('the configuration names the bucket and the API and worker have folders of their own', () => {
    expect(service.config.storage).toMatchObject({ kind: 's3', bucket: s3.bucket, forcePathStyle: true });
    expect(service.workerDir).not.toBe(service.dir);
  });

  it('upload, report and excerpt: the bytes go to the bucket, the worker analyses its own temp copy', async () => {
    const submit = await api.upload(files.pass, { profile: 'ebu-r128' }, KEYS.alpha);
    expect(submit.status).toBe(202);
    const done = await finished(submit.body.id);
    expect(done.body).toMatchObject({ state: 'completed', verdict: 'pass' });
    const report = await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha);
    expect(report.status).toBe(200);
    // BS.1770-5: -23 dBFS peak stereo 997 Hz sine = -23.0 LUFS.
    expect(report.body.summary.integratedLufs).toBeCloseTo(-23, 1);
    expect(report.body.file.sha256).toBe(sha256Of(files.pass));
    expect(await objectsIn('uploads')).toHaveLength(1);
    expect(await objectsIn('reports')).toEqual([
      `${service.config.storage.kind === 's3' ? service.config.storage.prefix : ''}/reports/${submit.body.id}.json`,
    ]);
    // The API reads the excerpt's audio from the bucket (a temp copy of its own, released after).
    const excerpt = await api.get(`/v1/jobs/${submit.body.id}/excerpt?startSeconds=1&endSeconds=2`, KEYS.alpha);
    expect(excerpt.status).toBe(200);
    expect(excerpt.headers['content-type']).toBe('audio/wav');
    expect(filesUnder(service.dir)).toEqual([]);
    expect(filesUnder(service.workerDir)).toEqual([]);
  });

  it('an upload over the limit is refused with 413 and no object is kept', async () => {
    const before = await objectsIn('uploads');
    const res = await api.upload(files.big, { profile: 'ebu-r128' }, KEYS.alpha);
    expect(res.status).toBe(413);
    expect(res.body.code).toBe('payload_too_large');
    expect(await objectsIn('uploads')).toEqual(before);
  });

  it('a sourceUrl is fetched into the bucket and analysed', async () => {
    const origin: Server = createServer((req, res) => {
      if (req.url === '/media/pass.wav')
        return createReadStream(files.pass).pipe(res.writeHead(200, { 'content-type': 'audio/wav' }));
      res.writeHead(404).end();
    });
    await new Promise<void>((resolve) => origin.listen(0, '127.0.0.1', resolve));
    try {
      const port = (origin.address() as { port: number }).port;
      const submit = await api.postJson(
        '/v1/jobs',
        { sourceUrl: `http://127.0.0.1:${port}/media/pass.wav`, profile: 'ebu-r128' },
        KEYS.alpha,
      );
      expect(submit.status).toBe(202);
      const done = await finished(submit.body.id);
      expect(done.body).toMatchObject({ state: 'completed', verdict: 'pass', source: { kind: 'url' } });
      const report = await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha);
      expect(report.body.file.sha256).toBe(sha256Of(files.pass));
      expect(filesUnder(service.workerDir)).toEqual([]);
    } finally {
      await new Promise<void>((resolve) => origin.close(() => resolve()));
    }
  });

  it('direct upload: a presigned PUT straight to the bucket, then a job on the uploadId, hashed on what landed', async () => {
    const bytes = readFileSync(files.pass);
    const created = await api.postJson('/v1/uploads', { fileName: 'direct.wav', sizeBytes: bytes.length }, KEYS.alpha);
    expect(created.status).toBe(201);
    expect(created.body).toMatchObject({ method: 'PUT', headers: { 'content-length': String(bytes.length) } });
    const { uploadId, url, headers } = created.body;
    // Before the file is there the job is refused.
    const early = await api.postJson('/v1/jobs', { uploadId, profile: 'ebu-r128' }, KEYS.alpha);
    expect(early.status).toBe(409);
    expect(early.body.code).toBe('upload_incomplete');
    // The signature covers Content-Length, so S3 refuses a body of another size. s3rver 3.7 does
    // not check presigned signatures at all (it takes a corrupted one), so here the API's own check
    // at submit refuses what landed.
    expect(new URL(url).searchParams.get('X-Amz-SignedHeaders')?.split(';')).toContain('content-length');
    expect((await fetch(url, { method: 'PUT', body: bytes.subarray(1) })).status).toBe(200);
    const short = await api.postJson('/v1/jobs', { uploadId, profile: 'ebu-r128' }, KEYS.alpha);
    expect(short.status).toBe(400);
    expect(short.body).toMatchObject({ code: 'validation_failed', field: 'uploadId' });
    expect(short.body.detail).toMatch(/not the \d+ declared/);
    const put = await fetch(url, { method: 'PUT', headers, body: bytes });
    expect(put.status).toBe(200);
    const submit = await api.postJson('/v1/jobs', { uploadId, profile: 'ebu-r128' }, KEYS.alpha);
    expect(submit.status).toBe(202);
    const done = await finished(submit.body.id);
    expect(done.body).toMatchObject({ state: 'completed', verdict: 'pass' });
    const report = await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha);
    expect(report.body.file.name).toBe('direct.wav');
    // The worker's hash of the object: exactly the bytes sent (no checksum framing stored with them).
    expect(report.body.file.sha256).toBe(sha256Of(files.pass));
    // Another tenant cannot use the upload id; a size over the limit gets no URL.
    expect((await api.postJson('/v1/jobs', { uploadId, profile: 'ebu-r128' }, KEYS.beta)).status).toBe(404);
    const over = await api.postJson('/v1/uploads', { fileName: 'x.wav', sizeBytes: 6 * 1024 * 1024 }, KEYS.alpha);
    expect(over.status).toBe(413);
  });

  it('an s3:// sourceUrl in an allowed bucket is read straight from it; another bucket is refused', async () => {
    const drop = `${s3.bucket}-drop`;
    await s3.bucketWith(drop, 'deliveries/promo mix.wav', readFileSync(files.pass));
    const submit = await api.postJson(
      '/v1/jobs',
      { sourceUrl: `s3://${drop}/deliveries/promo%20mix.wav`, profile: 'ebu-r128' },
      KEYS.alpha,
    );
    expect(submit.status).toBe(202);
    const done = await finished(submit.body.id);
    expect(done.body).toMatchObject({ state: 'completed', verdict: 'pass' });
    const report = await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha);
    expect(report.body.file).toMatchObject({ name: 'promo mix.wav', sha256: sha256Of(files.pass) });
    expect(filesUnder(service.workerDir)).toEqual([]);
    // Its own bucket is not a source bucket unless named.
    const refused = await api.postJson(
      '/v1/jobs',
      { sourceUrl: `s3://${s3.bucket}/anything.wav`, profile: 'ebu-r128' },
      KEYS.alpha,
    );
    expect(refused.status).toBe(422);
    expect(refused.body).toMatchObject({ code: 'source_refused', field: 'sourceUrl' });
  });

  it('readiness asks the bucket', async () => {
    const ready = await api.get('/readyz');
    expect(ready.status).toBe(200);
  });
});
