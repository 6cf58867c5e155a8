// A delivery package on the S3 backend (s3rver on loopback): the API and the worker share only
// Redis and the bucket, so the worker's set check reads local copies of the members' objects,
// and releases them when it ends.
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startS3Server, type TestS3 } from '../helpers/s3-server.ts';
import { writeStemSet } from '../helpers/stem-files.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, type TestService } from './harness.ts';

let s3: TestS3;
let service: TestService;
let api: Client;
let inputs: string;

const filesUnder = (dir: string) =>
  readdirSync(dir, { recursive: true, withFileTypes: true }).filter((entry) => entry.isFile());

beforeAll(async () => {
  s3 = await startS3Server();
  service = await startService({ s3 });
  api = client(service.url);
  inputs = mkdtempSync(join(tmpdir(), 'earmark-s3-packages-'));
}, 60_000);

afterAll(async () => {
  await service?.close();
  await s3?.close();
  rmSync(inputs, { recursive: true, force: true });
});

describe('packages on the S3 backend', () => {
  it('checks the set from copies of the stored objects and leaves no copy behind', async () => {
    const set = await writeStemSet({ dir: inputs, seconds: 2 });
    const upload = async (path: string) => (await api.upload(path, { profile: 'ebu-r128' }, KEYS.alpha)).body.id;
    const members = [
      { jobId: await upload(set.mix), role: 'mix' },
      ...(await Promise.all(set.stems.map(async (s) => ({ jobId: await upload(s), role: 'stem' })))),
    ];
    const submit = await api.postJson('/v1/packages', { profile: 'ebu-r128', members }, KEYS.alpha);
    expect(submit.status).toBe(202);
    const done = await until(async () => {
      const res = await api.get(`/v1/packages/${submit.body.id}`, KEYS.alpha);
      return res.body.state === 'completed' || res.body.state === 'failed' ? res.body : null;
    });
    expect(done.state).toBe('completed');
    // The set agrees: the stems null against the mix.
    expect(done.set.checks.every((c: { passed: boolean }) => c.passed)).toBe(true);
    expect(done.residual.residualRelativeDb).toBeLessThan(-140);
    // The mix reads far above -23 LUFS (EBU R 128 item h allows +/-1 LU): its own fail is the package's.
    expect(done.members[0].verdict).toBe('fail');
    expect(done.verdict).toBe('fail');
    expect(done.headline).toMatch(/^FAIL: mix\.wav fails: /);
    await until(async () => filesUnder(service.workerDir).length === 0);
  }, 60_000);
});
