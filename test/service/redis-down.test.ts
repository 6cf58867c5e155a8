// A private redis-server that the test stops: the API answers 503 with Retry-After at once
// (fail-fast connection), the Redis-counted rate limit included; readiness says so, and nothing crashes.
import { spawn, type ChildProcess } from 'node:child_process';
import { createServer } from 'node:net';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeSine } from './audio.ts';
import { client } from './client.ts';
import { KEYS, startService, until, type TestService } from './harness.ts';
import { Socket } from 'node:net';

let redis: ChildProcess;
let service: TestService;
let port: number;

const freePort = () =>
  new Promise<number>((resolve) => {
    const s = createServer().listen(0, '127.0.0.1', () => {
      const p = (s.address() as { port: number }).port;
      s.close(() => resolve(p));
    });
  });
const answers = (p: number) =>
  new Promise<boolean>((resolve) => {
    const s = new Socket();
    s.once('error', () => resolve(false)).connect(p, '127.0.0.1', () => {
      s.destroy();
      resolve(true);
    });
  });

beforeAll(async () => {
  port = await freePort();
  redis = spawn('redis-server', ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'], {
    stdio: 'ignore',
  });
  await until(() => answers(port));
  service = await startService({ worker: false, env: { REDIS_URL: `redis://127.0.0.1:${port}` } });
});

afterAll(async () => {
  if (redis.exitCode === null) redis.kill();
  await service?.api.close();
  const { rmSync } = await import('node:fs');
  if (service) rmSync(service.dir, { recursive: true, force: true });
});

describe('Redis outage', () => {
  it('answers 503 service_unavailable with Retry-After, and readyz reports it', async () => {
    const api = client(service.url);
    const wav = await writeSine(join(service.dir, 'a.wav'), -23, 1);
    expect((await api.get('/readyz')).status).toBe(200);
    redis.kill('SIGKILL');
    await until(async () => !(await answers(port)));
    const submit = await api.upload(wav, { profile: 'ebu-r128' }, KEYS.alpha);
    expect(submit.status).toBe(503);
    expect(submit.body.code).toBe('service_unavailable');
    expect(submit.headers['retry-after']).toBe('5');
    expect(JSON.stringify(submit.body)).not.toMatch(/ECONNREFUSED|127\.0\.0\.1|\.ts/);
    // The rate limit counts in Redis: it answers the same typed 503, never lets requests through uncounted.
    const limited = await api.get('/v1/profiles', KEYS.alpha);
    expect(limited.status).toBe(503);
    expect(limited.body.code).toBe('service_unavailable');
    expect(limited.headers['retry-after']).toBe('5');
    const ready = await api.get('/readyz');
    expect(ready.status).toBe(503);
    expect(ready.body).toMatchObject({ status: 'unavailable', redis: false });
    expect((await api.get('/healthz')).status).toBe(200);
  });
});
