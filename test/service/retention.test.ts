// The retention journey on both storage backends: a job through the real API and worker, then the
// worker's own retention pass (WorkerRuntime.sweep, the function it schedules) with an age that
// puts one job past retention and leaves a newer one alone. What is left in the directory or the
// bucket, and what the API answers for each job, is checked; responses against openapi/openapi.yaml.

import { ListObjectsV2Command } from '@aws-sdk/client-s3';
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createS3Client } from '../../src/storage/s3.ts';
import { startS3Server, type TestS3 } from '../helpers/s3-server.ts';
import { writeSine } from './audio.ts';
import { client, type Client } from './client.ts';
import { KEYS, sleep, startService, until, type TestService } from './harness.ts';

type Folder = 'uploads' | 'reports';

describe.each([{ backend: 'file' }, { backend: 's3' }])('retention on the $backend backend', ({ backend }) => {
  let s3: TestS3 | undefined;
  let service: TestService;
  let api: Client;
  let inputs: string;
  let pass: string;

  beforeAll(async () => {
    if (backend === 's3') s3 = await startS3Server();
    service = await startService(s3 ? { s3 } : {});
    api = client(service.url);
    inputs = mkdtempSync(join(tmpdir(), 'earmark-retention-inputs-'));
    // 997 Hz stereo sine at -23 dBFS peak reads -23.0 LUFS (ITU-R BS.1770-5): an EBU R 128 pass.
    pass = await writeSine(join(inputs, 'pass.wav'), -23, 4);
  });

  afterAll(async () => {
    await service?.close();
    await s3?.close();
    if (inputs) rmSync(inputs, { recursive: true, force: true });
  });

  /** The storage keys in one folder, read from the backend itself (the bucket or the directory). */
  async function stored(folder: Folder): Promise<string[]> {
    const location = service.config.storage;
    if (location.kind === 'file') return readdirSync(join(location.dir, folder)).map((name) => `${folder}/${name}`);
    const s3Client = createS3Client(location);
    try {
      const page = await s3Client.send(
        new ListObjectsV2Command({ Bucket: location.bucket, Prefix: `${location.prefix}/${folder}/` }),
      );
      return (page.Contents ?? []).map((item) => (item.Key ?? '').slice(location.prefix.length + 1));
    } finally {
      s3Client.destroy();
    }
  }

  /** Submits the file, waits for the worker, and returns the job id with the upload key it added. */
  async function completedJob(): Promise<{ id: string; uploadKey: string }> {
    const before = new Set(await stored('uploads'));
    const submit = await api.upload(pass, { profile: 'ebu-r128' }, KEYS.alpha);
    expect(submit.status).toBe(202);
    const id: string = submit.body.id;
    const done = await until(async () => {
      const res = await api.get(`/v1/jobs/${id}`, KEYS.alpha);
      return res.body.state === 'completed' || res.body.state === 'failed' ? res : null;
    });
    expect(done.body).toMatchObject({ state: 'completed', verdict: 'pass' });
    const added = (await stored('uploads')).filter((key) => !before.has(key));
    expect(added).toHaveLength(1);
    return { id, uploadKey: added[0] };
  }

  const excerptOf = (id: string) => api.get(`/v1/jobs/${id}/excerpt?startSeconds=1&endSeconds=2`, KEYS.alpha);

  it('the pass removes an old job’s upload and report, leaves a newer job’s, and the API answers not_found', async () => {
    if (!service.worker) throw new Error('the service needs its worker');
    const old = await completedJob();
    const oldDoneAt = Date.now();
    const report = await api.get(`/v1/jobs/${old.id}/report`, KEYS.alpha);
    expect(report.status).toBe(200);
    // BS.1770-5: -23 dBFS peak stereo 997 Hz sine = -23.0 LUFS.
    expect(report.body.summary.integratedLufs).toBeCloseTo(-23, 1);
    expect((await excerptOf(old.id)).status).toBe(200);

    // The object store keeps LastModified to the second: the newer job's files are written well over
    // a second after every file of the old one.
    await sleep(2_200);
    const fresh = await completedJob();
    expect((await stored('reports')).sort()).toEqual([`reports/${fresh.id}.json`, `reports/${old.id}.json`].sort());

    // The configured retention (24 h) removes nothing.
    expect(await service.worker.sweep()).toBe(0);
    // An age between the two jobs: the cutoff falls 600 ms after the old job completed, over a
    // second before the newer job's first byte was stored.
    const removed = await service.worker.sweep(Date.now() - (oldDoneAt + 600));
    expect(removed).toBe(2);
    expect(await stored('uploads')).toEqual([fresh.uploadKey]);
    expect(await stored('reports')).toEqual([`reports/${fresh.id}.json`]);

    // The old job's record stays in Redis until BullMQ's own removal age; its files are gone, and
    // the cached report went with its file, so each view is a typed not_found, not a stale copy.
    expect((await api.get(`/v1/jobs/${old.id}`, KEYS.alpha)).body.state).toBe('completed');
    for (const path of ['report', 'plot.svg', 'excerpt?startSeconds=1&endSeconds=2']) {
      const res = await api.get(`/v1/jobs/${old.id}/${path}`, KEYS.alpha);
      expect(res.status, path).toBe(404);
      expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
      expect(res.body.code, path).toBe('not_found');
      expect(res.body.detail, path).toMatch(/past its retention period/);
    }

    // The newer job is untouched: report and excerpt as before.
    const freshReport = await api.get(`/v1/jobs/${fresh.id}/report`, KEYS.alpha);
    expect(freshReport.status).toBe(200);
    expect(freshReport.body.summary.integratedLufs).toBeCloseTo(-23, 1);
    expect((await excerptOf(fresh.id)).status).toBe(200);
  });
});
