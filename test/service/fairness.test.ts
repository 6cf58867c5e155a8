// Fair queues between tenants, measured. Tenant alpha submits 200 jobs through the real API, then
// beta submits 1, while 2 workers x concurrency 2 take jobs with a trivial 100 ms processor (the
// analysis is not the subject here; the queue order is). Beta's job must start within
// workers x concurrency of alpha's jobs after it was submitted, not behind alpha's backlog, and its
// retry (the first attempt fails) likewise once its backoff is over (while it backs off, alpha's
// jobs run: that wait is the backoff's, not the queue's order); the workers restart the clock once
// the queue is empty. The same run with plain FIFO jobs (no priority) is the control: it shows the
// measure tells the two orders apart.

import { randomBytes } from 'node:crypto';
import { Worker } from 'bullmq';
import type { Redis } from 'ioredis';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ANALYSIS_QUEUE, ANALYZE_JOB_V1, type AnalyzeJobV1 } from '../../src/queue/contract.ts';
import { createRedis } from '../../src/queue/connection.ts';
import { FairShare, followClock } from '../../src/queue/fair-share.ts';
import { createAnalysisQueue } from '../../src/queue/queues.ts';
import { purgePrefix, serviceKey } from '../../src/queue/service-keys.ts';
import { startWorker } from '../../src/worker/runtime.ts';
import { client } from './client.ts';
import { KEYS, sleep, startService, until, type TestService } from './harness.ts';

const WORKERS = 2;
const CONCURRENCY = 2;
const SLOTS = WORKERS * CONCURRENCY;
const BURST = 200;
const WORK_MS = 100;
const RESTART_AT = 50;

let svc: TestService;
const open: Array<{ close(): Promise<unknown> }> = [];

beforeAll(async () => {
  svc = await startService({
    worker: false,
    env: { EARMARK_JOB_BACKOFF_MS: '10', EARMARK_RATE_LIMIT_PER_MINUTE: '0' },
  });
});
afterAll(async () => {
  for (const o of open.reverse()) await o.close().catch(() => undefined);
  await svc?.close();
});

interface Measured {
  /** Alpha's jobs not yet started when beta submitted. */
  backlogAtSubmit: number;
  /** Alpha's jobs started after beta's submission and before beta's first attempt. */
  aheadOfFirst: number;
  /** Alpha's jobs started after beta's retry was due (failure + backoff) and before it started. */
  aheadOfRetry: number;
  /** Beta's first attempt's place among all starts (0-based). */
  startIndex: number;
}

/** Runs the burst against the queue under `prefix`; `withClock` attaches the workers' fair-share clock. */
async function measure(
  prefix: string,
  submit: (tenant: 'alpha' | 'beta', i: number) => Promise<void>,
  withClock: boolean,
): Promise<Measured> {
  const starts: string[] = [];
  const startedAtMs: number[] = [];
  let retryDueMs = Number.POSITIVE_INFINITY;
  const queue = createAnalysisQueue(createRedisFor(), { ...svc.config, queuePrefix: prefix }, () => undefined);
  open.push(queue);
  for (let w = 0; w < WORKERS; w++) {
    const worker = new Worker<AnalyzeJobV1>(
      ANALYSIS_QUEUE,
      async (job) => {
        starts.push(`${job.data.tenant}:${job.attemptsMade}`);
        startedAtMs.push(Date.now());
        await sleep(WORK_MS);
        if (job.data.tenant === 'beta' && job.attemptsMade === 0) {
          throw new Error('the first attempt fails');
        }
      },
      { connection: createRedisFor(), prefix, concurrency: CONCURRENCY },
    );
    // Once BullMQ has moved the failed attempt to its backoff (it says so with 'failed'), the retry
    // is due at most the backoff later.
    worker.on('failed', (job) => {
      if (job?.data.tenant === 'beta') retryDueMs = Date.now() + svc.config.jobBackoffMs;
    });
    // A low restart bound, so the run also shows the clock restarting once the queue is empty.
    if (withClock) followClock(worker, queue, new FairShare(createRedisFor(), prefix, RESTART_AT), () => undefined);
    open.push(worker);
  }
  for (let i = 0; i < BURST; i += 10) await Promise.all(Array.from({ length: 10 }, (_, k) => submit('alpha', i + k)));
  const startedAtSubmit = starts.length;
  await submit('beta', 0);
  await until(async () => starts.length >= BURST + 2, 20);
  if (withClock) await until(async () => (await new FairShare(createRedisFor(), prefix).clock()) === 0);
  const first = starts.indexOf('beta:0');
  const retry = starts.indexOf('beta:1');
  const alphaBetween = (from: number, to: number) => starts.slice(from, to).filter((s) => s.startsWith('alpha')).length;
  return {
    backlogAtSubmit: BURST - alphaBetween(0, startedAtSubmit),
    aheadOfFirst: alphaBetween(startedAtSubmit, first),
    aheadOfRetry: alphaBetween(
      startedAtMs.findIndex((atMs) => atMs > retryDueMs),
      retry,
    ),
    startIndex: first,
  };
}

function createRedisFor(): Redis {
  const redis = createRedis(svc.config.redisUrl, 'worker');
  open.push({ close: () => redis.quit() });
  return redis;
}

describe('fair queues between tenants', () => {
  it(`beta's one job starts within ${SLOTS} of alpha's 200 after it is submitted; FIFO puts it behind them`, async () => {
    const api = client(svc.url);
    const fair = await measure(
      svc.config.queuePrefix,
      async (tenant, i) => {
        const res = await api.postJson(
          '/v1/jobs',
          { sourceUrl: `http://127.0.0.1:9/${tenant}-${i}.wav`, profile: 'ebu-r128' },
          tenant === 'alpha' ? KEYS.alpha : KEYS.beta,
        );
        expect(res.status).toBe(202);
      },
      true,
    );
    // The control: the same jobs on a queue of their own, added without a priority (plain FIFO).
    const controlPrefix = `${svc.config.queuePrefix}c${randomBytes(2).toString('hex')}`;
    const [sample] = await svc.api.deps.queue.getJobs(['completed'], 0, 0);
    const controlQueue = createAnalysisQueue(createRedisFor(), { ...svc.config, queuePrefix: controlPrefix }, () => {});
    open.push(controlQueue);
    const fifo = await measure(
      controlPrefix,
      async (tenant) => {
        await controlQueue.add(ANALYZE_JOB_V1, { ...sample.data, tenant });
      },
      false,
    );
    console.log(
      `[fair share] ${WORKERS} workers x ${CONCURRENCY}, ${BURST} alpha jobs then 1 beta job: ` +
        `fair: backlog ${fair.backlogAtSubmit}, alpha starts ahead of beta ${fair.aheadOfFirst}, ahead of its retry ${fair.aheadOfRetry}, beta start #${fair.startIndex}; ` +
        `FIFO: backlog ${fifo.backlogAtSubmit}, ahead ${fifo.aheadOfFirst}, ahead of retry ${fifo.aheadOfRetry}, start #${fifo.startIndex}`,
    );
    expect(fair.backlogAtSubmit).toBeGreaterThan(10 * SLOTS);
    expect(fair.aheadOfFirst).toBeLessThanOrEqual(SLOTS);
    expect(fair.aheadOfRetry).toBeLessThanOrEqual(SLOTS);
    expect(fifo.backlogAtSubmit).toBeGreaterThan(10 * SLOTS);
    expect(fifo.aheadOfFirst).toBeGreaterThan(10 * SLOTS);
    await purgePrefix(createRedisFor(), controlPrefix);
  }, 60_000);

  it('the service worker advances the clock as it starts jobs; submissions take priorities from it', async () => {
    const redis = createRedisFor();
    await redis.del(serviceKey(svc.config.queuePrefix, 'fair'));
    const fair = new FairShare(redis, svc.config.queuePrefix);
    const worker = await startWorker(
      { ...svc.config, workerConcurrency: 1, jobAttempts: 1 },
      pino({ level: 'silent' }),
    );
    open.push(worker);
    const res = await client(svc.url).postJson(
      '/v1/jobs',
      { sourceUrl: 'http://127.0.0.1:9/nothing-listens.wav', profile: 'ebu-r128' },
      KEYS.beta,
    );
    expect(res.status).toBe(202);
    const job = await svc.api.deps.queue.getJob(res.body.id);
    expect(job?.priority).toBe(1);
    await until(async () => (await fair.clock()) === 1);
  }, 30_000);
});
