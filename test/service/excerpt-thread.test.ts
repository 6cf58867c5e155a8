// Excerpts run off the API's event loop: while the API cuts an excerpt near the end of a long
// silent FLAC (an hour; EARMARK_EXCERPT_BOMB_SECONDS=7200 for two), whose frames hold 65535
// samples in a few bytes each (the shape that once held the loop for seconds and gigabytes),
// /healthz keeps answering 200 and the API process barely grows.
// Times and memory are printed, not asserted (except a loose bound on RSS growth).
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cutExcerpt } from '../../src/engine/excerpt.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, type TestService } from './harness.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');
const BOMB_SECONDS = Number(process.env.EARMARK_EXCERPT_BOMB_SECONDS ?? 3600);

let service: TestService;
let api: Client;
let bomb: string;
let jobId: string;

beforeAll(async () => {
  if (!hasFfmpeg) return;
  service = await startService();
  api = client(service.url);
  bomb = join(service.dir, 'silent-long.flac');
  const made = spawnSync('ffmpeg', [
    '-loglevel',
    'error',
    '-y',
    '-f',
    'lavfi',
    '-i',
    'anullsrc=r=48000:cl=stereo',
    '-t',
    String(BOMB_SECONDS),
    '-c:a',
    'flac',
    '-frame_size',
    '65535',
    bomb,
  ]);
  expect(made.status).toBe(0);
  const submit = await api.upload(bomb, { profile: 'ebu-r128' }, KEYS.alpha);
  expect(submit.status).toBe(202);
  jobId = submit.body.id;
  const done = await until(async () => {
    const res = await api.get(`/v1/jobs/${jobId}`, KEYS.alpha);
    return res.body.state === 'completed' || res.body.state === 'failed' ? res : null;
  }, 250);
  expect(done.body.state).toBe('completed');
}, 600_000);

afterAll(async () => {
  await service?.close();
});

const mib = (bytes: number) => (bytes / 2 ** 20).toFixed(1);

describe.skipIf(!hasFfmpeg)('excerpts off the event loop', () => {
  it('/healthz answers 200 throughout an excerpt of a long silent FLAC; the API grows little', async () => {
    const startSeconds = BOMB_SECONDS - 10;
    const rssBefore = process.memoryUsage().rss;
    let rssPeak = rssBefore;
    const sampler = setInterval(() => {
      rssPeak = Math.max(rssPeak, process.memoryUsage().rss);
    }, 10);
    let inProgress = true;
    const started = performance.now();
    const excerpt = fetch(
      `${service.url}/v1/jobs/${jobId}/excerpt?startSeconds=${startSeconds}&endSeconds=${startSeconds + 10}`,
      {
        headers: { authorization: `Bearer ${KEYS.alpha}` },
      },
    )
      .then(async (res) => ({
        status: res.status,
        type: res.headers.get('content-type'),
        body: new Uint8Array(await res.arrayBuffer()),
      }))
      .finally(() => {
        inProgress = false;
      });
    const health: { status: number; ms: number; during: boolean }[] = [];
    while (inProgress) {
      const t0 = performance.now();
      const res = await fetch(`${service.url}/healthz`);
      await res.arrayBuffer();
      health.push({ status: res.status, ms: performance.now() - t0, during: inProgress });
    }
    const got = await excerpt;
    const excerptMs = performance.now() - started;
    clearInterval(sampler);
    const during = health.filter((h) => h.during);
    const ms = during.map((h) => h.ms).sort((a, b) => a - b);
    console.log(
      `[excerpt of a ${BOMB_SECONDS} s silent FLAC at ${startSeconds} s: ${excerptMs.toFixed(0)} ms; /healthz answers during it ${during.length}, ` +
        `all 200: ${during.every((h) => h.status === 200)}, median ${ms[Math.floor(ms.length / 2)]?.toFixed(1)} ms, max ${ms.at(-1)?.toFixed(1)} ms; ` +
        `API process RSS ${mib(rssBefore)} -> peak ${mib(rssPeak)} MiB (+${mib(rssPeak - rssBefore)}), after ${mib(process.memoryUsage().rss)} MiB]`,
    );
    expect(got.status).toBe(200);
    expect(got.type).toBe('audio/wav');
    // The loop was free: health answers arrived while the excerpt was being cut, every one 200.
    expect(during.length).toBeGreaterThan(0);
    expect(during.every((h) => h.status === 200)).toBe(true);
    expect(rssPeak - rssBefore).toBeLessThan(150 * 2 ** 20);
    // The thread's WAV is the one the engine cuts.
    const local = await cutExcerpt(bomb, startSeconds, startSeconds + 10);
    expect(Buffer.compare(Buffer.from(got.body), Buffer.from(local.wav))).toBe(0);
  }, 120_000);

  it('clients that go away free their threads and places in the queue', async () => {
    const url = `${service.url}/v1/jobs/${jobId}/excerpt?startSeconds=${BOMB_SECONDS - 12}&endSeconds=${BOMB_SECONDS}`;
    const headers = { authorization: `Bearer ${KEYS.alpha}` };
    // Two running and four waiting fill the runner; each is dropped while in flight.
    const gone = Array.from({ length: 6 }, () => new AbortController());
    const requests = gone.map((c) =>
      fetch(url, { headers, signal: c.signal })
        .then((r) => r.arrayBuffer())
        .catch(() => null),
    );
    await new Promise((resolve) => setTimeout(resolve, 100));
    for (const c of gone) c.abort();
    await Promise.all(requests);
    const next = await until(async () => {
      const res = await fetch(url, { headers });
      return res.status === 200 ? res : null;
    });
    expect(next.headers.get('content-type')).toBe('audio/wav');
  }, 120_000);
});
