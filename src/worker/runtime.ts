// The worker process: the analysis Worker (sandboxed processor), the webhook Worker (in
// process: it only waits on the network), the retention sweep, and a time-bounded drain.

import { Job, UnrecoverableError, Worker } from 'bullmq';
import type { Redis } from 'ioredis';
import type { Logger } from 'pino';
import type { Config } from '../config/index.ts';
import { toEarmarkError } from '../errors/index.ts';
import { UrlPolicy } from '../net/url-guard.ts';
import { ANALYSIS_QUEUE, ANALYZE_JOB_V1, DELIVER_WEBHOOK_V1, WEBHOOK_QUEUE, type AnalyzeJobV1, type AnalyzeResultV1, type DeliverWebhookV1, type JobEvent } from '../queue/contract.ts';
import { createRedis, waitReady } from '../queue/connection.ts';
import { jobView } from '../queue/job-view.ts';
import { createAnalysisQueue, createWebhookQueue } from '../queue/queues.ts';
import { ServiceStore } from '../queue/store.ts';
import { openStorage } from '../storage/index.ts';
import { CHILD_SETTINGS_ENV, type ChildSettings } from './child-settings.ts';
import { deliver } from './webhooks.ts';

// The child is BullMQ's own main.js, which then imports our processor: a loader given on the
// child's command line is the one hook that is in place before that import. Resolving tsx to a
// file URL keeps it independent of the working directory.
const TSX_LOADER = import.meta.resolve('tsx');
const PROCESSOR_FILE = new URL('./processor.ts', import.meta.url);

export interface WorkerRuntime {
  /** Stops taking jobs; waits up to shutdownTimeoutMs for active ones, then hands them back. */
  close(): Promise<{ handedBack: number }>;
}

export async function startWorker(config: Config, log: Logger): Promise<WorkerRuntime> {
  const redis: Redis = createRedis(config.redisUrl, 'worker');
  redis.on('error', (error) => log.warn({ err: { message: error.message } }, 'redis connection error'));
  await waitReady(redis, 10_000);
  const storage = await openStorage(config.storageDir);
  const store = new ServiceStore(redis, config.queuePrefix, config.retentionHours * 3600);
  const policy = new UrlPolicy(config.urlAllowlist);
  const onError = (error: Error, where: string) => log.error({ err: { message: error.message }, where }, 'queue error');
  const webhookQueue = createWebhookQueue(redis, config, onError);
  const analysisQueue = createAnalysisQueue(redis, config, onError);

  const childSettings: ChildSettings = { storageDir: config.storageDir, urlAllowlist: config.urlAllowlist, fetchLimitBytes: config.fetchLimitBytes, fetchTimeoutMs: config.fetchTimeoutMs };
  const analysis = new Worker<AnalyzeJobV1, AnalyzeResultV1>(ANALYSIS_QUEUE, PROCESSOR_FILE, {
    connection: redis,
    prefix: config.queuePrefix,
    concurrency: config.workerConcurrency,
    useWorkerThreads: false,
    workerForkOptions: {
      execArgv: [...process.execArgv, '--import', TSX_LOADER],
      env: { ...process.env, [CHILD_SETTINGS_ENV]: JSON.stringify(childSettings) },
    },
    // A child that dies takes its job with it; the stall check hands such jobs to a live worker.
    maxStalledCount: 2,
    lockDuration: config.lockDurationMs,
    stalledInterval: config.stalledIntervalMs,
  });
  const active = new Map<string, Job<AnalyzeJobV1, AnalyzeResultV1>>();
  analysis.on('error', (error) => onError(error, 'analysis worker'));
  analysis.on('active', (job) => {
    active.set(String(job.id), job);
    log.info({ jobId: job.id, attempt: job.attemptsMade + 1 }, 'job started');
  });

  async function notify(jobId: string, event: JobEvent): Promise<void> {
    const job = await Job.fromId<AnalyzeJobV1, AnalyzeResultV1>(analysisQueue, jobId);
    if (!job?.data.callbackUrl) return;
    const view = jobView(job, event === 'job.completed' ? 'completed' : 'failed', []);
    const deliveryId = `dlv_${jobId}_${event === 'job.completed' ? 'c' : 'f'}`;
    const body = JSON.stringify({ event, deliveryId, job: { ...view, callback: { url: job.data.callbackUrl, deliveries: [] } } });
    // jobId = deliveryId: a second notify for the same outcome is dropped by BullMQ.
    await webhookQueue.add(DELIVER_WEBHOOK_V1, { jobId, tenant: job.data.tenant, url: job.data.callbackUrl, event, deliveryId, body }, { jobId: deliveryId });
  }

  analysis.on('completed', (job, result) => {
    active.delete(String(job.id));
    log.info({ jobId: job.id, verdict: result.verdict }, 'job completed');
    void (async () => {
      const json = await storage.readReport(String(job.id));
      if (json) await store.putReport(String(job.id), json);
      await store.recordFinished(String(job.id), 'completed', result.analysisSeconds);
      await notify(String(job.id), 'job.completed');
    })().catch((error: unknown) => log.error({ jobId: job.id, err: { message: toEarmarkError(error).message } }, 'after-completion step failed'));
  });

  analysis.on('failed', (job, error) => {
    if (!job) return;
    active.delete(String(job.id));
    void (async () => {
      const state = await job.getState();
      log.warn({ jobId: job.id, reason: error.message, state }, state === 'failed' ? 'job failed' : 'job attempt failed, will retry');
      if (state !== 'failed') return;
      await store.recordFinished(String(job.id), 'failed', null);
      await notify(String(job.id), 'job.failed');
    })().catch((e: unknown) => log.error({ jobId: job.id, err: { message: toEarmarkError(e).message } }, 'after-failure step failed'));
  });

  const webhooks = new Worker<DeliverWebhookV1>(WEBHOOK_QUEUE, async (job) => {
    if (job.name !== DELIVER_WEBHOOK_V1) throw new UnrecoverableError(`unknown job name ${job.name}`);
    const d = job.data;
    const secret = config.webhookSecrets[d.tenant] ?? config.webhookDefaultSecret;
    const attempt = job.attemptsMade + 1;
    const record = (outcome: 'delivered' | 'retrying' | 'failed', statusCode: number | null, error: string | null) =>
      store.addDelivery(d.jobId, { deliveryId: d.deliveryId, event: d.event, attempt, at: new Date().toISOString(), statusCode, outcome, error });
    if (!secret) {
      await record('failed', null, 'no webhook secret is configured for this tenant');
      throw new UnrecoverableError('no webhook secret');
    }
    try {
      const { statusCode } = await deliver(policy, { url: d.url, secret, deliveryId: d.deliveryId, event: d.event, body: d.body, timeoutMs: config.webhookTimeoutMs });
      await record('delivered', statusCode, null);
      log.info({ jobId: d.jobId, deliveryId: d.deliveryId, attempt }, 'webhook delivered');
    } catch (thrown) {
      const error = toEarmarkError(thrown);
      const final = error.code === 'source_refused' || attempt >= (job.opts.attempts ?? 1);
      const statusCode = typeof error.details.statusCode === 'number' ? error.details.statusCode : null;
      await record(final ? 'failed' : 'retrying', statusCode, error.message);
      log.warn({ jobId: d.jobId, deliveryId: d.deliveryId, attempt, final }, 'webhook delivery failed');
      if (final) throw new UnrecoverableError(error.message);
      throw new Error(error.message);
    }
  }, { connection: redis, prefix: config.queuePrefix, concurrency: 4 });
  webhooks.on('error', (error) => onError(error, 'webhook worker'));

  const sweepMs = config.retentionHours * 3_600_000;
  const sweeper = setInterval(() => {
    storage.sweep(sweepMs).then((n) => n > 0 && log.info({ removed: n }, 'retention sweep'), () => log.warn('retention sweep failed'));
  }, Math.min(sweepMs, 600_000));
  sweeper.unref();
  log.info({ concurrency: config.workerConcurrency, jobName: ANALYZE_JOB_V1 }, 'worker ready');

  return {
    async close() {
      clearInterval(sweeper);
      let timer: NodeJS.Timeout | undefined;
      const drained = await Promise.race([
        analysis.pause().then(() => true),
        new Promise<boolean>((resolve) => { timer = setTimeout(() => resolve(false), config.shutdownTimeoutMs); }),
      ]);
      clearTimeout(timer);
      let handedBack = 0;
      if (!drained) {
        // Back to the wait list at once, so another worker takes them without waiting for a stall check.
        for (const job of active.values()) {
          if (job.token && (await job.moveToWait(job.token).then(() => true, () => false))) handedBack += 1;
        }
        log.warn({ handedBack }, 'shutdown bound reached: active jobs handed back');
      }
      await analysis.close(!drained);
      await webhooks.close();
      await webhookQueue.close();
      await analysisQueue.close();
      await redis.quit().catch(() => undefined);
      return { handedBack };
    },
  };
}
