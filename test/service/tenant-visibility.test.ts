// Per-tenant visibility: /v1/queue and /metrics count only the key's tenant; the all-tenant view
// needs the operator scope; /metrics needs the metrics scope, which admin does not imply.
// The tests' real Redis under a unique prefix (harness), two tenants.

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createRedis } from '../../src/queue/connection.ts';
import { bullKeys, JobIndex } from '../../src/queue/job-index.ts';
import { createAnalysisQueue } from '../../src/queue/queues.ts';
import { writeSine } from './audio.ts';
import { client, type Client } from './client.ts';
import { startService, until, type TestService } from './harness.ts';

const K = {
  alpha: 'vis-alpha-submit-read-0001',
  alphaAdmin: 'vis-alpha-admin-only-00002',
  alphaMetrics: 'vis-alpha-metrics-000003',
  beta: 'vis-beta-submit-read-00004',
  betaMetrics: 'vis-beta-metrics-0000005',
  ops: 'vis-ops-operator-00000006',
  betaOperatorNoMetrics: 'vis-beta-operator-only-07',
};
const API_KEYS = JSON.stringify([
  { key: K.alpha, tenant: 'alpha', scopes: ['submit', 'read'] },
  { key: K.alphaAdmin, tenant: 'alpha', scopes: ['admin'] },
  { key: K.alphaMetrics, tenant: 'alpha', scopes: ['metrics', 'read'] },
  { key: K.beta, tenant: 'beta', scopes: ['submit', 'read'] },
  { key: K.betaMetrics, tenant: 'beta', scopes: ['metrics'] },
  { key: K.ops, tenant: 'ops', scopes: ['read', 'metrics', 'operator'] },
  { key: K.betaOperatorNoMetrics, tenant: 'beta', scopes: ['operator', 'read'] },
]);

const series = (text: string, name: string) => text.split('\n').filter((l) => l.startsWith(name));
const value = (text: string, line: string) =>
  Number(
    text
      .split('\n')
      .find((l) => l.startsWith(`${line} `))
      ?.split(' ')
      .pop(),
  );

describe('without a worker: queued jobs per tenant', () => {
  let svc: TestService;
  let api: Client;
  beforeAll(async () => {
    svc = await startService({
      worker: false,
      env: { EARMARK_API_KEYS: API_KEYS, EARMARK_RATE_LIMIT_PER_MINUTE: '0' },
    });
    api = client(svc.url);
  });
  afterAll(async () => {
    await svc?.close();
  });

  it('each tenant sees its own waiting jobs; the operator sees all; index entries of removed jobs drop out', async () => {
    const wav = await writeSine(join(svc.dir, 'a.wav'), -23, 1);
    for (const key of [K.alpha, K.alpha, K.alpha, K.beta])
      expect((await api.upload(wav, { profile: 'ebu-r128' }, key)).status).toBe(202);
    const alpha = (await api.get('/v1/queue', K.alpha)).body;
    expect(alpha).toMatchObject({
      view: 'tenant',
      waiting: 3,
      active: 0,
      delayed: 0,
      completed: 0,
      failed: 0,
      finishedLastMinute: 0,
    });
    expect((await api.get('/v1/queue?view=tenant', K.beta)).body).toMatchObject({ view: 'tenant', waiting: 1 });
    expect((await api.get('/v1/queue', K.ops)).body).toMatchObject({ view: 'tenant', waiting: 0 });
    expect((await api.get('/v1/queue?view=all', K.ops)).body).toMatchObject({ view: 'all', waiting: 4 });
    const refused = await api.get('/v1/queue?view=all', K.alpha);
    expect(refused.status).toBe(403);
    expect(refused.body.code).toBe('forbidden');
    expect((await api.get('/v1/queue?view=all', K.alphaAdmin)).status).toBe(403);
    expect((await api.get('/v1/queue?view=everyone', K.alpha)).status).toBe(400);

    // A repeated Idempotency-Key answers 200 with the first job: not a new submission.
    for (let i = 0; i < 2; i++)
      expect((await api.upload(wav, { profile: 'ebu-r128' }, K.beta, { 'idempotency-key': 'vis-once' })).status).toBe(
        i === 0 ? 202 : 200,
      );
    const alphaMetrics = (await api.get('/metrics', K.alphaMetrics)).text;
    expect(value(alphaMetrics, 'earmark_tenant_jobs{state="waiting"}')).toBe(3);
    expect(value(alphaMetrics, 'earmark_jobs_submitted_total')).toBe(3);
    expect(value((await api.get('/metrics', K.betaMetrics)).text, 'earmark_jobs_submitted_total')).toBe(2);
    expect(value((await api.get('/metrics', K.betaMetrics)).text, 'earmark_tenant_jobs{state="waiting"}')).toBe(2);
    const all = (await api.get('/metrics?view=all', K.ops)).text;
    expect(value(all, 'earmark_queue_jobs{state="waiting"}')).toBe(5);
    expect(value(all, 'earmark_jobs_submitted_total{tenant="alpha"}')).toBe(3);
    expect(value(all, 'earmark_jobs_submitted_total{tenant="beta"}')).toBe(2);

    // A job BullMQ removed after the retention no longer counts, and its index entry is dropped.
    const redis = createRedis(svc.config.redisUrl, 'worker');
    try {
      const index = new JobIndex(redis, svc.config.queuePrefix, svc.config.retentionHours * 3600);
      const queue = createAnalysisQueue(redis, svc.config, () => undefined);
      await index.add('beta', 'j_removedremovedremoved00', Date.now() - (svc.config.retentionHours + 1) * 3_600_000);
      expect(await index.counts('beta', bullKeys(queue), 0)).toMatchObject({
        waiting: 0,
        prioritized: 2,
        completed: 0,
      }); // queued with a fair-share priority
      expect(await redis.zscore(`${svc.config.queuePrefix}:svc:jobs:beta`, 'j_removedremovedremoved00')).toBeNull();
      await queue.close();
    } finally {
      await redis.quit();
    }
  });

  it('/metrics needs the metrics scope: admin alone and operator alone get 403', async () => {
    for (const key of [K.alphaAdmin, K.alpha, K.betaOperatorNoMetrics]) {
      const res = await api.get('/metrics', key);
      expect(res.status).toBe(403);
      expect(res.body.code).toBe('forbidden');
    }
    expect((await api.get('/metrics?view=all', K.betaMetrics)).status).toBe(403);
    // admin still implies submit and read.
    expect((await api.get('/v1/queue', K.alphaAdmin)).status).toBe(200);
  });
});

describe('with a worker: finished jobs, requests and the operator view', () => {
  let svc: TestService;
  let api: Client;
  beforeAll(async () => {
    svc = await startService({ env: { EARMARK_API_KEYS: API_KEYS, EARMARK_RATE_LIMIT_PER_MINUTE: '0' } });
    api = client(svc.url);
  });
  afterAll(async () => {
    await svc?.close();
  });

  it("a tenant's /v1/queue and /metrics show only its own jobs and requests", async () => {
    const wav = await writeSine(join(svc.dir, 'ok.wav'), -23, 2);
    const junk = join(svc.dir, 'junk.wav');
    writeFileSync(junk, 'not audio, just text\n'.repeat(20));
    const ids: Array<[string, string]> = [];
    for (const [file, key] of [
      [wav, K.alpha],
      [wav, K.alpha],
      [junk, K.alpha],
      [wav, K.beta],
    ] as const) {
      const res = await api.upload(file, { profile: 'ebu-r128' }, key);
      expect(res.status).toBe(202);
      ids.push([res.body.id, key]);
    }
    for (const [id, key] of ids) {
      await until(async () => ['completed', 'failed'].includes((await api.get(`/v1/jobs/${id}`, key)).body.state));
    }

    const alpha = (await api.get('/v1/queue', K.alpha)).body;
    expect(alpha).toMatchObject({
      view: 'tenant',
      waiting: 0,
      active: 0,
      completed: 2,
      failed: 1,
      finishedLastMinute: 3,
    });
    expect(alpha.workers).toBeGreaterThanOrEqual(1);
    expect((await api.get('/v1/queue', K.beta)).body).toMatchObject({ completed: 1, failed: 0, finishedLastMinute: 1 });
    expect((await api.get('/v1/queue?view=all', K.ops)).body).toMatchObject({
      view: 'all',
      completed: 3,
      failed: 1,
      finishedLastMinute: 4,
    });

    const beta = (await api.get('/metrics', K.betaMetrics)).text;
    expect(value(beta, 'earmark_tenant_jobs{state="completed"}')).toBe(1);
    expect(value(beta, 'earmark_tenant_jobs{state="failed"}')).toBe(0);
    expect(value(beta, 'earmark_tenant_jobs_finished_last_minute')).toBe(1);
    // Beta's own submissions only: one 202 on POST /v1/jobs, none of alpha's three.
    expect(value(beta, 'earmark_http_requests_total{method="POST",route="/v1/jobs",status="202"}')).toBe(1);
    expect(
      value(beta, 'earmark_http_request_duration_seconds_count{method="POST",route="/v1/jobs",status="202"}'),
    ).toBe(1);
    expect(value(beta, 'earmark_jobs_submitted_total')).toBe(1);
    expect(beta).not.toMatch(/tenant="/);
    expect(series(beta, 'earmark_jobs_total')).toEqual([]);
    expect(series(beta, 'earmark_analysis_seconds')).toEqual([]);
    // The process's own figures are the operator's.
    expect(series(beta, 'process_')).toEqual([]);

    const alphaText = (await api.get('/metrics', K.alphaMetrics)).text;
    expect(value(alphaText, 'earmark_tenant_jobs{state="completed"}')).toBe(2);
    expect(value(alphaText, 'earmark_tenant_jobs{state="failed"}')).toBe(1);
    expect(value(alphaText, 'earmark_http_requests_total{method="POST",route="/v1/jobs",status="202"}')).toBe(3);

    const all = (await api.get('/metrics?view=all', K.ops)).text;
    expect(value(all, 'earmark_jobs_total{outcome="completed"}')).toBe(3);
    expect(value(all, 'earmark_jobs_total{outcome="failed"}')).toBe(1);
    expect(value(all, 'earmark_analysis_seconds_count')).toBe(3);
    expect(value(all, 'earmark_analysis_seconds_bucket{le="+Inf"}')).toBe(3);
    // Cumulative buckets: never decreasing, never above the count.
    const buckets = series(all, 'earmark_analysis_seconds_bucket').map((l) => Number(l.split(' ').pop()));
    expect(buckets.length).toBeGreaterThan(2);
    expect(buckets).toEqual([...buckets].sort((a, b) => a - b));
    expect(value(all, 'earmark_http_request_duration_seconds_count{method="POST",route="/v1/jobs",status="202"}')).toBe(
      4,
    );
    expect(value(all, 'earmark_jobs_submitted_total{tenant="beta"}')).toBe(1);
    expect(series(all, 'process_cpu_user_seconds_total').length).toBe(1);
    expect(value(all, 'earmark_http_requests_total{tenant="alpha",method="POST",route="/v1/jobs",status="202"}')).toBe(
      3,
    );
    expect(value(all, 'earmark_http_requests_total{tenant="beta",method="POST",route="/v1/jobs",status="202"}')).toBe(
      1,
    );
  });
});
