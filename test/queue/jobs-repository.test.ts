// The jobs repository against the suite's real Redis (unique prefix): each state reads
// exactly as BullMQ's own getJob + getState + the delivery log give it, tenants stay apart, and a
// job BullMQ removed drops out of the tenant's index.

import { randomBytes } from 'node:crypto';
import { Worker } from 'bullmq';
import type { Redis } from 'ioredis';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/index.ts';
import { createRedis } from '../../src/queue/connection.ts';
import { testRedisUrl } from '../helpers/redis.ts';
import {
  ANALYSIS_QUEUE,
  ANALYZE_JOB_V1,
  encodeFailure,
  type AnalyzeJobV1,
  type AnalyzeResultV1,
} from '../../src/queue/contract.ts';
import { jobView } from '../../src/queue/job-view.ts';
import { JobsRepository } from '../../src/queue/jobs-repository.ts';
import { createAnalysisQueue, type AnalysisQueue } from '../../src/queue/queues.ts';
import { purgePrefix } from '../../src/queue/service-keys.ts';
import { openServiceStores, type ServiceStores } from '../../src/queue/store.ts';

const prefix = `tr${randomBytes(6).toString('hex')}`;
let redis: Redis;
let queue: AnalysisQueue;
let worker: Worker<AnalyzeJobV1, AnalyzeResultV1>;
let stores: ServiceStores;
let jobs: JobsRepository;

const data = (tenant: string, i: number): AnalyzeJobV1 => ({
  tenant,
  source: { kind: 'url', url: `http://127.0.0.1:9/take-${i}.wav` },
  profileId: 'ebu-r128',
  profileVersion: '1.0.0',
  profile: { id: 'ebu-r128', version: '1.0.0', name: 'x', description: 'x', basis: 'x', rules: [] },
  callbackUrl: i === 0 ? 'http://127.0.0.1:9/hook' : null,
  externalId: `ext-${i}`,
  metadata: { desk: 'news' },
  submittedAt: new Date(1_700_000_000_000).toISOString(),
});
const result: AnalyzeResultV1 = {
  verdict: 'warn',
  reportKey: 'r/1',
  analysisSeconds: 0.4,
  integratedLufs: -22.9,
  truePeakDbtp: -1.2,
  headline: 'Warn: short-term loudness',
  sourceKey: 'u/1',
};

beforeAll(async () => {
  redis = createRedis(testRedisUrl(), 'worker');
  const config = loadConfig({
    REDIS_URL: testRedisUrl(),
    EARMARK_QUEUE_PREFIX: prefix,
    EARMARK_STORAGE_DIR: '/tmp',
    EARMARK_API_KEYS: '[]',
  });
  queue = createAnalysisQueue(redis, config, () => undefined);
  worker = new Worker<AnalyzeJobV1, AnalyzeResultV1>(ANALYSIS_QUEUE, null, {
    connection: redis,
    prefix,
    autorun: false,
  });
  stores = openServiceStores(redis, prefix, 60);
  jobs = new JobsRepository(redis, queue, stores.index, stores.reports, prefix, async () => null);
});
afterAll(async () => {
  await worker.close();
  await queue.close();
  await purgePrefix(redis, prefix);
  await redis.quit();
});

describe('JobsRepository', () => {
  it("reads each state as BullMQ does, with deliveries; other tenants' jobs are not found", async () => {
    const ids = [
      'j_repoactive0000000000000',
      'j_repocompleted000000000',
      'j_repofailed0000000000000',
      'j_repoqueued0000000000000',
    ];
    for (const [i, id] of ids.entries()) {
      await queue.add(ANALYZE_JOB_V1, data('alpha', i), { jobId: id, attempts: 1 });
      await stores.index.add('alpha', id, 1_700_000_000_000 + i);
    }
    // Oldest first out of the wait list: the last one stays queued.
    const token = 'repo-test';
    const taken = [];
    for (let i = 0; i < 3; i++) taken.push(await worker.getNextJob(token));
    const [first, second, third] = taken;
    if (!first || !second || !third) throw new Error('no job to take');
    await second.moveToCompleted(result, token, false);
    await third.moveToFailed(new Error(encodeFailure('unsupported_format', 'not audio')), token, false);
    await stores.deliveries.add(first.id ?? '', {
      deliveryId: 'd1',
      event: 'job.completed',
      attempt: 1,
      at: new Date(0).toISOString(),
      statusCode: 500,
      outcome: 'retrying',
      error: 'HTTP 500',
    });

    for (const id of [first.id, second.id, third.id, ids[3]]) {
      const expectedJob = await queue.getJob(String(id));
      if (!expectedJob) throw new Error(`no job ${id}`);
      const expected = jobView(expectedJob, await expectedJob.getState(), await stores.deliveries.list(String(id)));
      expect(await jobs.view('alpha', String(id))).toEqual(expected);
    }
    expect((await jobs.view('alpha', String(first.id))).state).toBe('active');
    expect((await jobs.view('alpha', String(first.id))).callback?.deliveries).toHaveLength(1);
    await expect(jobs.view('beta', String(first.id))).rejects.toMatchObject({ code: 'not_found' });
    await expect(jobs.completed('alpha', String(first.id))).rejects.toMatchObject({ code: 'report_not_ready' });
    await expect(jobs.report('alpha', String(second.id))).rejects.toMatchObject({ code: 'not_found' });
    await stores.reports.put(String(second.id), '{"verdict":"warn"}');
    expect(await jobs.report('alpha', String(second.id))).toBe('{"verdict":"warn"}');

    const page = await jobs.list('alpha', { cursor: null, limit: 10 });
    expect(page.items.map((v) => v.id)).toEqual([...ids].reverse());
    expect(page.next).toBeNull();
    expect((await jobs.list('alpha', { cursor: null, limit: 10, state: 'failed' })).items.map((v) => v.id)).toEqual([
      third.id,
    ]);
    const two = await jobs.list('alpha', { cursor: null, limit: 2 });
    expect(two.items).toHaveLength(2);
    expect((await jobs.list('alpha', { cursor: two.next, limit: 2 })).items.map((v) => v.id)).toEqual([ids[1], ids[0]]);
  });

  it('a job BullMQ removed is skipped and its index entry dropped', async () => {
    await stores.index.add('gamma', 'j_repogone000000000000000', Date.now());
    expect((await jobs.list('gamma', { cursor: null, limit: 5 })).items).toEqual([]);
    expect(await redis.zcard(`${prefix}:svc:jobs:gamma`)).toBe(0);
    await expect(jobs.view('gamma', 'j_repogone000000000000000')).rejects.toMatchObject({ code: 'not_found' });
  });
});
