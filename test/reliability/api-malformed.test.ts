// Every malformed case through the API as an upload: a failed job with the case's code, or a
// completed one for the valid cases; one worker process (concurrency 2) survives them all and
// still serves a valid job afterwards.

import { statSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateMalformedCases, type MalformedCase } from '../../fixtures/malformed.ts';
import { alive, spawnService, stopProcess, waitFor, type ServiceProcess } from '../../fixtures/procs.ts';
import { writeSine } from '../service/audio.ts';
import { client, type Client } from '../service/client.ts';
import { KEYS, startService, type TestService } from '../service/harness.ts';

let svc: TestService;
let api: Client;
let worker: ServiceProcess;
let cases: MalformedCase[];

beforeAll(async () => {
  svc = await startService({
    worker: false,
    env: {
      EARMARK_RATE_LIMIT_PER_MINUTE: '0',
      EARMARK_UPLOAD_LIMIT_BYTES: String(64 * 1024 * 1024),
      EARMARK_WORKER_CONCURRENCY: '2',
    },
  });
  api = client(svc.url);
  // Only regular files can be uploaded (the directory and missing-file cases are CLI-only).
  cases = (await generateMalformedCases(join(svc.dir, 'cases'))).filter((c) =>
    statSync(c.path, { throwIfNoEntry: false })?.isFile(),
  );
  worker = spawnService('worker', { ...svc.env, EARMARK_LOG_LEVEL: 'info' });
});

afterAll(async () => {
  if (worker) await stopProcess(worker);
  await svc?.close();
});

async function inBatches<T, R>(items: T[], size: number, f: (item: T) => Promise<R>): Promise<R[]> {
  const out: R[] = [];
  for (let i = 0; i < items.length; i += size) out.push(...(await Promise.all(items.slice(i, i + size).map(f))));
  return out;
}

describe('malformed inputs through the API', () => {
  it('each upload ends as a failed job with its code, or completed for valid input; the worker survives', async () => {
    const expectedOf = (c: MalformedCase) => c.cliExpected ?? c.expected;
    const submitted = await inBatches(cases, 8, async (c) => {
      const res = await api.upload(c.path, { profile: 'ebu-r128' }, KEYS.alpha);
      return { c, status: res.status, id: res.body.id as string };
    });
    expect(submitted.filter((s) => s.status !== 202).map((s) => `${s.c.id}: ${s.status}`)).toEqual([]);
    const wrong: string[] = [];
    await inBatches(submitted, 8, async ({ c, id }) => {
      const job = await waitFor(
        `job of ${c.id}`,
        async () => {
          const body = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body as {
            state: string;
            error?: { code: string; message: string };
          };
          return body.state === 'completed' || body.state === 'failed' ? body : null;
        },
        120_000,
        200,
      );
      const expected = expectedOf(c);
      const got = job.state === 'completed' ? 'ok' : `error:${job.error?.code}`;
      if ((expected.startsWith('ok') ? 'ok' : expected) !== got)
        wrong.push(`${c.id}: expected ${expected}, got ${got} ${job.error?.message ?? ''}`);
      // The client sees its own file name, never our storage path.
      if (job.error?.message.includes(svc.dir)) wrong.push(`${c.id}: storage path in the error`);
    });
    expect(wrong).toEqual([]);
    expect(alive(worker.pid)).toBe(true);
    const crashes = worker.lines.filter((l) => /"level":(50|60)/.test(l));
    expect(crashes).toEqual([]);

    const valid = await api.upload(
      await writeSine(join(svc.dir, 'after.wav'), -23, 3),
      { profile: 'ebu-r128' },
      KEYS.alpha,
    );
    const after = await waitFor(
      'the valid job after the hostile ones',
      async () => {
        const b = (await api.get(`/v1/jobs/${valid.body.id}`, KEYS.alpha)).body;
        return b.state === 'completed' ? b : null;
      },
      60_000,
    );
    expect(after.verdict).toBe('pass');
    expect(worker.lines.some((l) => l.includes(valid.body.id) && l.includes('job completed'))).toBe(true);
    const failed = submitted.length - submitted.filter((s) => expectedOf(s.c).startsWith('ok')).length;
    console.log(
      `[api malformed] cases ${submitted.length}, failed jobs with their code ${failed}, completed ${submitted.length - failed}, wrong 0, worker pid ${worker.pid} alive, crashes 0, valid job after: ${after.verdict}`,
    );
  }, 240_000);
});
