// Exports over HTTP against a real server, real Redis and a real worker: flags as CSV, the markers
// WAV streamed from storage (read back by our cue reader, audio bytes unchanged), and the JUnit
// summary of several jobs. Every response is checked against openapi/openapi.yaml.
import { createHash } from 'node:crypto';
import { readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { join } from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readCueMarkers } from '../../src/decode/cue.ts';
import { readRiffLayout } from '../../src/decode/riff-chunks.ts';
import { FLAG_CSV_COLUMNS } from '../../src/exports/flags-csv.ts';
import { hasTool } from '../helpers/tools.ts';
import { toFlac, writeSine } from './audio.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, type TestService } from './harness.ts';

let service: TestService;
let api: Client;
const ids: Record<'loud' | 'pass' | 'junk', string> = { loud: '', pass: '', junk: '' };
let loudPath = '';

async function submitAndWait(path: string): Promise<string> {
  const submit = await api.upload(path, { profile: 'ebu-r128' }, KEYS.alpha);
  expect(submit.status).toBe(202);
  const id: string = submit.body.id;
  await until(async () => {
    const res = await api.get(`/v1/jobs/${id}`, KEYS.alpha);
    return res.body.state === 'completed' || res.body.state === 'failed';
  });
  return id;
}

/** The data chunk's bytes of a WAVE file. */
async function dataOf(path: string): Promise<Buffer> {
  const handle = await open(path, 'r');
  try {
    const data = (await readRiffLayout(handle, (await handle.stat()).size)).chunks.find((c) => c.id === 'data');
    if (!data) throw new Error('no data chunk');
    return readFileSync(path).subarray(data.bodyOffset, data.bodyOffset + data.sizeBytes);
  } finally {
    await handle.close();
  }
}

beforeAll(async () => {
  service = await startService();
  api = client(service.url);
  // At -0.5 dBFS peak a 997 Hz stereo sine reads -0.5 LUFS and about -0.5 dBTP (ITU-R BS.1770-5):
  // fails EBU R 128 loudness and its -1 dBTP ceiling, with true-peak flags.
  loudPath = await writeSine(join(service.dir, 'loud mix;v2.wav'), -0.5, 4);
  const pass = await writeSine(join(service.dir, 'pass.wav'), -23, 4);
  const junk = join(service.dir, 'junk.wav');
  writeFileSync(junk, 'not audio at all\n'.repeat(20));
  [ids.loud, ids.pass, ids.junk] = await Promise.all([loudPath, pass, junk].map(submitAndWait));
}, 120_000);

afterAll(async () => {
  await service?.close();
});

describe('exports over HTTP', () => {
  it('flags.csv: one row per flag, a safe download name, tenants kept apart', async () => {
    const report = (await api.get(`/v1/jobs/${ids.loud}/report`, KEYS.alpha)).body;
    expect(report.flags.length).toBeGreaterThan(0);
    const res = await api.get(`/v1/jobs/${ids.loud}/flags.csv`, KEYS.alpha);
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    expect(res.headers['content-disposition']).toBe('attachment; filename="loud_mix_v2.flags.csv"');
    const lines = res.text.trimEnd().split('\r\n');
    expect(lines[0]).toBe(FLAG_CSV_COLUMNS.join(','));
    expect(lines.length).toBe(report.flags.length + 1);
    expect((await api.get(`/v1/jobs/${ids.loud}/flags.csv`, KEYS.beta)).status).toBe(404);
    expect((await api.get(`/v1/jobs/${ids.junk}/flags.csv`, KEYS.alpha)).status).toBe(409);
  });

  it('markers.wav: streamed from storage with a cue point per flag; the audio bytes unchanged', async () => {
    const report = (await api.get(`/v1/jobs/${ids.loud}/report`, KEYS.alpha)).body;
    const res = await api.checked(
      request(service.url)
        .get(`/v1/jobs/${ids.loud}/markers.wav`)
        .set('authorization', `Bearer ${KEYS.alpha}`)
        .buffer(true)
        .parse((body, done) => {
          const parts: Buffer[] = [];
          body.on('data', (b: Buffer) => parts.push(b));
          body.on('end', () => done(null, Buffer.concat(parts)));
        }),
    );
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toBe('audio/wav');
    expect(res.headers['content-disposition']).toBe('attachment; filename="loud_mix_v2.markers.wav"');
    const body = res.body as Buffer;
    expect(Number(res.headers['content-length'])).toBe(body.length);
    const out = join(service.dir, 'downloaded.wav');
    writeFileSync(out, body);
    expect((await readCueMarkers(out)).map((m) => [m.id, m.sampleOffset])).toEqual(
      report.flags.map((f: { number: number; startSample: number }) => [f.number, f.startSample]),
    );
    expect((await dataOf(out)).equals(await dataOf(loudPath))).toBe(true);
  });

  it.runIf(hasTool('ffmpeg'))('markers.wav of a FLAC job is markers_need_wave (422)', async () => {
    const flac = toFlac(loudPath, join(service.dir, 'loud.flac'));
    const id = await submitAndWait(flac);
    const res = await api.get(`/v1/jobs/${id}/markers.wav`, KEYS.alpha);
    expect(res.status).toBe(422);
    expect(res.body.code).toBe('markers_need_wave');
  });

  it('jobs.junit.xml: one case per id in order; fail, error and unknown ids counted', async () => {
    const unknown = `j_${'0'.repeat(24)}`;
    const res = await api.get(
      `/v1/jobs.junit.xml?ids=${ids.pass},${ids.loud},${ids.junk},${unknown}&name=nightly`,
      KEYS.alpha,
    );
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^application\/xml/);
    expect(res.text).toContain('<testsuite name="nightly" tests="4" failures="1" errors="2" skipped="0"');
    const names = [...res.text.matchAll(/<testcase name="([^"]*)"/g)].map((m) => m[1]);
    expect(names).toEqual([
      `pass.wav [${ids.pass}]`,
      `loud mix_v2.wav [${ids.loud}]`,
      `junk.wav [${ids.junk}]`,
      unknown,
    ]);
    // Another tenant's jobs are unknown to this key.
    const other = await api.get(`/v1/jobs.junit.xml?ids=${ids.pass}`, KEYS.beta);
    expect(other.text).toContain('tests="1" failures="0" errors="1"');
    expect((await api.get('/v1/jobs.junit.xml?ids=nope', KEYS.alpha)).status).toBe(400);
  });

  it('markers.wav once the stored audio is gone (past retention) is 404, without the path', async () => {
    const report = (await api.get(`/v1/jobs/${ids.pass}/report`, KEYS.alpha)).body;
    const uploads = join(service.dir, 'uploads');
    const stored = readdirSync(uploads).find(
      (name) =>
        createHash('sha256')
          .update(readFileSync(join(uploads, name)))
          .digest('hex') === report.file.sha256,
    );
    expect(stored).toBeDefined();
    rmSync(join(uploads, stored ?? ''));
    const res = await api.get(`/v1/jobs/${ids.pass}/markers.wav`, KEYS.alpha);
    expect(res.status).toBe(404);
    expect(res.body.detail).toContain('past its retention period');
    expect(JSON.stringify(res.body)).not.toContain(service.dir);
  });
});
