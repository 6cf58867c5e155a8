// The operator's exports and packages on the S3 backend (s3rver on loopback), one service for both:
// - markers: the API copies the object to a temp file, streams the marked copy from it, and
//   removes the copy when the download ends;
// - a delivery package: the API and the worker share only Redis and the bucket, so the worker's set
//   check reads local copies of the members' objects, and releases them when it ends.
import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readCueMarkers } from '../../src/decode/cue.ts';
import { startS3Server, type TestS3 } from '../helpers/s3-server.ts';
import { writeStemSet } from '../helpers/stem-files.ts';
import { writeSine } from './audio.ts';
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
  inputs = mkdtempSync(join(tmpdir(), 'earmark-s3-desk-'));
}, 60_000);

afterAll(async () => {
  await service?.close();
  await s3?.close();
  rmSync(inputs, { recursive: true, force: true });
});

describe('markers on the S3 backend', () => {
  it('streams the marked copy of the stored object and leaves no temp copy behind', async () => {
    // At -0.5 dBFS peak a 997 Hz stereo sine is about -0.5 dBTP (ITU-R BS.1770-5): over EBU R 128's -1 dBTP.
    const loud = await writeSine(join(inputs, 'loud.wav'), -0.5, 4);
    const submit = await api.upload(loud, { profile: 'ebu-r128' }, KEYS.alpha);
    const id: string = submit.body.id;
    await until(async () => (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body.state === 'completed');
    const report = (await api.get(`/v1/jobs/${id}/report`, KEYS.alpha)).body;
    const res = await api.checked(
      request(service.url)
        .get(`/v1/jobs/${id}/markers.wav`)
        .set('authorization', `Bearer ${KEYS.alpha}`)
        .buffer(true)
        .parse((body, done) => {
          const parts: Buffer[] = [];
          body.on('data', (b: Buffer) => parts.push(b));
          body.on('end', () => done(null, Buffer.concat(parts)));
        }),
    );
    expect(res.status).toBe(200);
    const out = join(inputs, 'downloaded.wav');
    writeFileSync(out, res.body as Buffer);
    expect((await readCueMarkers(out)).map((m) => m.sampleOffset)).toEqual(
      report.flags.map((f: { startSample: number }) => f.startSample),
    );
    // The source's audio follows its 44-byte header (writeSine: plain PCM); the copy's ends the file.
    const source = readFileSync(loud);
    expect((res.body as Buffer).subarray(-(source.length - 44)).equals(source.subarray(44))).toBe(true);
    await until(async () => filesUnder(service.dir).length === 0);
  }, 60_000);
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
