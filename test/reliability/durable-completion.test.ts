// Durable completion: a worker process SIGKILLs itself at the edges of a job's outcome (its
// durable writes done but the outcome not yet committed, or committed but its listeners not yet
// run). A second worker must then deliver the webhook at least once, every post under one
// `Earmark-Delivery` id, with the report readable and the outcome recorded exactly once.
// EARMARK_DURABLE_TRIALS repeats each case (default 1).

import { writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { alive, childPids, spawnService, stopProcess, waitFor, type ServiceProcess } from '../../fixtures/procs.ts';
import { KILL_AT_ENV, deliveryIdOf } from '../../src/worker/runtime.ts';
import { writeSine } from '../service/audio.ts';
import { client, type Client } from '../service/client.ts';
import { KEYS, startService } from '../service/harness.ts';
import { writeLongWav } from '../../fixtures/long-audio.ts';

const cleanups: Array<() => Promise<void> | void> = [];
afterEach(async () => {
  for (const c of cleanups.splice(0).reverse()) await c();
});

interface Post {
  delivery: string;
  event: string;
  job: { id: string; state: string; attemptsMade: number; finishedAt: string | null };
}
interface Receiver {
  url: string;
  posts: Post[];
  close(): Promise<void>;
}

async function startReceiver(): Promise<Receiver> {
  const posts: Receiver['posts'] = [];
  const server: Server = createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on('data', (chunk: Buffer) => chunks.push(chunk));
    req.on('end', () => {
      const body = JSON.parse(Buffer.concat(chunks).toString('utf8')) as { job: Post['job'] };
      posts.push({
        delivery: String(req.headers['earmark-delivery']),
        event: String(req.headers['earmark-event']),
        job: body.job,
      });
      res.writeHead(204).end();
    });
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as { port: number };
  return {
    url: `http://127.0.0.1:${port}/hook`,
    posts,
    close: () => new Promise((resolve) => server.close(() => resolve())),
  };
}

function worker(env: Record<string, string>): ServiceProcess {
  const p = spawnService('worker', { ...env, EARMARK_LOG_LEVEL: 'info' });
  cleanups.push(() => stopProcess(p));
  return p;
}

type JobBody = {
  state: string;
  attemptsMade: number;
  progressPercent?: number;
  callback?: { deliveries: Array<{ deliveryId: string; outcome: string }> };
  error?: { code: string };
};
const jobState = async (api: Client, id: string) => (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body as JobBody;

const TRIALS = Number(process.env.EARMARK_DURABLE_TRIALS ?? 1);

const CASES = [
  // The reported fault: finishedOn set, the process gone before any listener work.
  { killAt: 'after-complete', input: 'good', outcome: 'completed' },
  // Effects written, outcome not committed: the job stalls and a second worker re-runs it.
  { killAt: 'before-complete', input: 'good', outcome: 'completed' },
  { killAt: 'after-fail', input: 'bad', outcome: 'failed' },
  { killAt: 'before-fail', input: 'bad', outcome: 'failed' },
] as const;

describe('durable completion', () => {
  for (const c of CASES) {
    it(
      `worker SIGKILLed ${c.killAt}: the ${c.outcome} webhook still arrives under one delivery id, report and record kept`,
      async () => {
        const receiver = await startReceiver();
        cleanups.push(() => receiver.close());
        const svc = await startService({
          worker: false,
          env: {
            EARMARK_RATE_LIMIT_PER_MINUTE: '0',
            EARMARK_LOCK_DURATION_MS: '2000',
            EARMARK_STALLED_INTERVAL_MS: '1000',
          },
        });
        cleanups.push(() => svc.close());
        const api = client(svc.url);
        const store = svc.api.deps.store;
        const file = c.input === 'good' ? await writeSine(join(svc.dir, 'good.wav'), -23, 2) : join(svc.dir, 'bad.wav');
        if (c.input === 'bad')
          writeFileSync(file, Buffer.concat([Buffer.from('RIFF\x24\x00\x00\x00WAVEjunk'), Buffer.alloc(64, 7)]));
        const event = c.outcome === 'completed' ? 'job.completed' : 'job.failed';
        const lines: string[] = [];
        for (let trial = 1; trial <= TRIALS; trial++) {
          const submitted = await api.upload(file, { profile: 'ebu-r128', callbackUrl: receiver.url }, KEYS.alpha);
          expect(submitted.status).toBe(202);
          const id = submitted.body.id as string;
          const first = worker({ ...svc.env, [KILL_AT_ENV]: c.killAt });
          // Collect its analysis children while it lives (it may kill itself within a second).
          const children = new Set<number>();
          let gone = false;
          void first.exited.then(() => {
            gone = true;
          });
          while (!gone) {
            for (const pid of childPids(first.pid)) children.add(pid);
            await new Promise((r) => setTimeout(r, 20));
          }
          const signal = first.child.signalCode;
          expect(signal).toBe('SIGKILL');
          const stateAtKill = (await jobState(api, id)).state;
          expect(stateAtKill).toBe(c.killAt.startsWith('after') ? c.outcome : 'active');
          const postsAtKill = receiver.posts.filter((p) => p.delivery.startsWith(`dlv_${id}_`)).length;
          await waitFor(
            "the killed worker's analysis children to exit",
            async () => [...children].every((pid) => !alive(pid)),
            15_000,
          );

          const second = worker(svc.env);
          const delivered = await waitFor(
            'the webhook',
            async () => {
              const s = await jobState(api, id);
              return s.callback?.deliveries.some((d) => d.outcome === 'delivered') ? s : null;
            },
            60_000,
            100,
          );
          expect(delivered.state).toBe(c.outcome);
          const posts = receiver.posts.filter((p) => p.delivery.startsWith(`dlv_${id}_`));
          expect(posts.length).toBeGreaterThanOrEqual(1);
          expect(new Set(posts.map((p) => p.delivery))).toEqual(new Set([deliveryIdOf(id, event)]));
          expect(posts.every((p) => p.event === event)).toBe(true);
          // The body reads as the committed job does (it is written just before the commit).
          expect(posts[0].job).toMatchObject({ id, state: c.outcome, attemptsMade: delivered.attemptsMade });
          expect(posts[0].job.finishedAt).toBeTruthy();
          expect(await store.outcomes.outcomeOf(id)).toBe(c.outcome);
          if (c.outcome === 'completed') {
            expect(await store.reports.get(id)).toBeTruthy();
            expect((await api.get(`/v1/jobs/${id}/report`, KEYS.alpha)).status).toBe(200);
          } else {
            expect(delivered.error?.code).toBeTruthy();
          }
          await stopProcess(second);
          lines.push(
            `trial ${trial}: state at kill ${stateAtKill}, posts at kill ${postsAtKill}, posts ${posts.length}, delivery ids 1`,
          );
        }
        // Counted once per job however often the outcome was written (a re-run writes it again).
        expect((await store.outcomes.counters()).jobs[c.outcome]).toBe(TRIALS);
        console.log(`[durable ${c.killAt}] ${lines.join('; ')}; ${c.outcome} counted ${TRIALS}/${TRIALS}`);
      },
      60_000 + TRIALS * 90_000,
    );
  }

  it('a job that stalls more than maxStalledCount: the worker that fails it writes the job.failed effects first, even if it is killed before the commit', async () => {
    const receiver = await startReceiver();
    cleanups.push(() => receiver.close());
    const svc = await startService({
      worker: false,
      env: {
        EARMARK_RATE_LIMIT_PER_MINUTE: '0',
        EARMARK_LOCK_DURATION_MS: '2000',
        EARMARK_STALLED_INTERVAL_MS: '1000',
        EARMARK_UPLOAD_LIMIT_BYTES: String(128 * 1024 * 1024),
      },
    });
    cleanups.push(() => svc.close());
    const api = client(svc.url);
    // An hour at 8 kHz mono: a few seconds of analysis, so each kill lands mid-file.
    const wav = await writeLongWav(join(svc.dir, 'long.wav'), 8000, 3600);
    const submitted = await api.upload(wav, { profile: 'ebu-r128', callbackUrl: receiver.url }, KEYS.alpha);
    const id = submitted.body.id as string;
    // maxStalledCount is 2: the third stall marks the job to fail on its next pick-up.
    for (let kill = 1; kill <= 3; kill++) {
      const w = worker(svc.env);
      await waitFor(
        `worker ${kill} to start the job`,
        async () => w.lines.some((l) => l.includes(id) && l.includes('job started')),
        60_000,
        50,
      );
      w.child.kill('SIGKILL');
      await w.exited;
    }
    // The worker that fails it dies between its writes and moveToFailed; the job stalls once more.
    const failer = worker({ ...svc.env, [KILL_AT_ENV]: 'before-fail' });
    await waitFor(
      'the failing worker to kill itself',
      async () => failer.child.signalCode !== null || failer.child.exitCode !== null,
      60_000,
      50,
    );
    expect(failer.child.signalCode).toBe('SIGKILL');
    const last = worker(svc.env);
    const delivered = await waitFor(
      'the job.failed webhook',
      async () => {
        const s = await jobState(api, id);
        return s.callback?.deliveries.some((d) => d.outcome === 'delivered') ? s : null;
      },
      60_000,
      100,
    );
    expect(delivered.state).toBe('failed');
    const posts = receiver.posts.filter((p) => p.delivery.startsWith(`dlv_${id}_`));
    expect(new Set(posts.map((p) => p.delivery))).toEqual(new Set([deliveryIdOf(id, 'job.failed')]));
    expect(await svc.api.deps.store.outcomes.outcomeOf(id)).toBe('failed');
    expect((await svc.api.deps.store.outcomes.counters()).jobs.failed).toBe(1);
    await stopProcess(last);
    console.log(
      `[durable stalled] killed mid-analysis 3 times, the failing worker killed before its commit; ${delivered.error?.code}: posts ${posts.length}, delivery ids 1, failed counted 1`,
    );
  }, 180_000);
});
