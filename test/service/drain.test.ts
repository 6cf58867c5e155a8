// SIGTERM drain of a real worker process (workers/worker.ts): with a generous bound the active
// job finishes before exit; with a short bound it is handed back to the queue and another
// worker completes it. No timing assertions: the bound only decides which path is taken.

import { spawn, type ChildProcess } from 'node:child_process';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import pino from 'pino';
import { loadConfig } from '../../src/config/index.ts';
import { startWorker } from '../../src/worker/runtime.ts';
import { writeSine } from './audio.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, type TestService } from './harness.ts';

let service: TestService;
let api: Client;
let longFile: string;

beforeAll(async () => {
  service = await startService({ worker: false, env: { EARMARK_UPLOAD_LIMIT_BYTES: String(100 * 1024 * 1024) } });
  api = client(service.url);
  longFile = await writeSine(join(service.dir, 'long.wav'), -23, 150);
});

afterAll(async () => {
  await service?.close();
});

function spawnWorker(shutdownTimeoutMs: number): { child: ChildProcess; exited: Promise<number | null> } {
  const child = spawn(process.execPath, ['bin/run.js', 'workers/worker.ts'], {
    cwd: new URL('../..', import.meta.url).pathname,
    env: {
      ...process.env,
      ...service.env,
      EARMARK_SHUTDOWN_TIMEOUT_MS: String(shutdownTimeoutMs),
      EARMARK_LOG_LEVEL: 'silent',
    },
    stdio: 'ignore',
  });
  const exited = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
  return { child, exited };
}

async function submitAndWaitActive(): Promise<string> {
  const submit = await api.upload(longFile, { profile: 'ebu-r128' }, KEYS.alpha);
  expect(submit.status).toBe(202);
  await until(async () => {
    const res = await api.get(`/v1/jobs/${submit.body.id}`, KEYS.alpha);
    return res.body.state === 'active' && res.body.progressPercent > 0;
  });
  return submit.body.id;
}

describe('SIGTERM drain', () => {
  it('finishes the active job within a generous bound, then exits 0', async () => {
    const { child, exited } = spawnWorker(120_000);
    const id = await submitAndWaitActive();
    child.kill('SIGTERM');
    expect(await exited).toBe(0);
    const job = await api.get(`/v1/jobs/${id}`, KEYS.alpha);
    expect(job.body).toMatchObject({ state: 'completed', verdict: 'pass', attemptsMade: 1 });
  });

  it('hands the active job back when the bound is short; another worker completes it', async () => {
    const { child, exited } = spawnWorker(200);
    const id = await submitAndWaitActive();
    child.kill('SIGTERM');
    expect(await exited).toBe(0);
    const after = await api.get(`/v1/jobs/${id}`, KEYS.alpha);
    expect(['queued', 'completed']).toContain(after.body.state);
    const worker = await startWorker(loadConfig(service.env), pino({ level: 'silent' }));
    try {
      const done = await until(async () => {
        const res = await api.get(`/v1/jobs/${id}`, KEYS.alpha);
        return res.body.state === 'completed' ? res : null;
      }, 200);
      expect(done.body.verdict).toBe('pass');
    } finally {
      await worker.close();
    }
  });
});
