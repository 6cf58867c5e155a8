// The worker process: the analysis Worker (sandboxed processor), the webhook Worker (in
// process: it only waits on the network), the package Worker (in process; its set check runs on
// a thread, package-worker.ts), the retention sweep, and a time-bounded drain.
//
// Completion side effects (the report copy in Redis, the finished record, the webhook job) are
// written by the parent before BullMQ commits the outcome, not in the `completed`/`failed`
// listeners: a crash between the commit and a listener would lose them. A crash before the commit
// leaves the job active; it stalls and is re-run, so every write is idempotent (same keys, the
// webhook job's id is its delivery id) and the webhook worker sends only once the outcome it
// announces is committed.

import { DelayedError, Job, UnrecoverableError, Worker, type Span, type WorkerOptions } from 'bullmq';
import type { Redis } from 'ioredis';
import type { Logger } from 'pino';
import type { Config } from '../config/index.ts';
import { isRetryable, toEarmarkError } from '../errors/index.ts';
import { UrlPolicy } from '../net/url-guard.ts';
import {
  ANALYSIS_QUEUE,
  ANALYZE_JOB_V1,
  DELIVER_WEBHOOK_V1,
  WEBHOOK_QUEUE,
  type AnalyzeJobV1,
  type AnalyzeResultV1,
  type DeliverWebhookV1,
  type JobEvent,
} from '../queue/contract.ts';
import { createRedis, waitReady } from '../queue/connection.ts';
import { jobView, type JobView } from '../queue/job-view.ts';
import { followClock } from '../queue/fair-share.ts';
import { createAnalysisQueue, createPackageQueue, createWebhookQueue } from '../queue/queues.ts';
import { openServiceStores } from '../queue/store.ts';
import { openStorage } from '../storage/index.ts';
import { CHILD_SETTINGS_ENV, childSettingsOf } from './child-settings.ts';
import { threadBudget } from './thread-policy.ts';
import { CHILD_GUARD_IMPORT } from './child-guard.ts';
import { retentionPass } from './retention.ts';
import { deliver } from './webhooks.ts';
import { startPackageWorker } from './package-worker.ts';
import { currentBundle } from '../../bin/bundles.js';

// The child is BullMQ's own main.js, which then imports our processor: the bundled one
// (dist/analysis-child.mjs, bin/build.js) while it is newer than every source, else processor.ts
// through the tsx loader, given on the child's command line as the one hook in place before that
// import. The bundle starts its meter threads from the bundled dist/parallel-worker.mjs in 30-60 ms
// instead of 250-450 ms through tsx, which decides whether a second thread pays for a file.
const BUNDLED_PROCESSOR = currentBundle('analysis-child');
const TSX_LOADER = import.meta.resolve('tsx');
const PROCESSOR_FILE = new URL(BUNDLED_PROCESSOR ?? './processor.ts', import.meta.url);
const CHILD_EXEC_ARGV = [
  ...process.execArgv,
  ...['--import', CHILD_GUARD_IMPORT],
  ...(BUNDLED_PROCESSOR ? [] : ['--import', TSX_LOADER]),
];

/** Fault tests only: the worker SIGKILLs itself at this point (see durable-completion.test.ts). */
export const KILL_AT_ENV = 'EARMARK_TEST_SIGKILL_AT';
type KillPoint = 'before-complete' | 'after-complete' | 'before-fail' | 'after-fail';
const killAt = process.env[KILL_AT_ENV] as KillPoint | undefined;
function killPoint(point: KillPoint): void {
  if (killAt === point) process.kill(process.pid, 'SIGKILL');
}

type AnalysisJob = Job<AnalyzeJobV1, AnalyzeResultV1>;

export interface Settlement {
  completed(job: AnalysisJob, result: AnalyzeResultV1): Promise<void>;
  failed(job: AnalysisJob, error: Error): Promise<void>;
}

/** Errors BullMQ treats as "move the job", not as a failed attempt. */
const NOT_FAILURES = new Set(['DelayedError', 'WaitingError', 'WaitingChildrenError', 'RateLimitError']);

/** BullMQ fails the job for good on this error (mirrors Job.shouldRetryJob). */
export function isFinalFailure(job: AnalysisJob, error: Error): boolean {
  if (error.name === 'UnrecoverableError') return true;
  return !(job.attemptsMade + 1 < (job.opts.attempts ?? 1));
}

/**
 * The sandboxed Worker with a parent-side wrapper: the child has no Redis connection (the job
 * carries its frozen profile), and the parent still holds the job's lock here, so the durable
 * writes run in the parent after the child answers and before BullMQ moves the job.
 */
class AnalysisWorker extends Worker<AnalyzeJobV1, AnalyzeResultV1> {
  /** Jobs in callProcessJob now. */
  private analysing = 0;

  constructor(
    file: URL,
    opts: WorkerOptions,
    private readonly settle: Settlement,
    private readonly budget: (otherActiveJobs: number) => Promise<number>,
  ) {
    super(ANALYSIS_QUEUE, file, opts);
  }

  protected override async callProcessJob(
    job: AnalysisJob,
    token: string,
    signal?: AbortSignal,
  ): Promise<AnalyzeResultV1> {
    const others = this.analysing;
    this.analysing += 1;
    let result: AnalyzeResultV1;
    try {
      const threads = await this.budget(others);
      result = await super.callProcessJob(withThreadBudget(job, threads), token, signal);
    } finally {
      this.analysing -= 1;
    }
    // A throw here fails this attempt (retried): better than a completion without its effects.
    await this.settle.completed(job, result);
    killPoint('before-complete');
    return result;
  }

  // Every failure passes here before moveToFailed, including a job failed for stalling too often
  // (BullMQ fails it on its next pick-up without calling the processor).
  protected override async handleFailed(
    err: Error,
    job: AnalysisJob,
    token: string,
    fetchNextCallback?: () => boolean,
    span?: Span,
  ): Promise<AnalysisJob> {
    if (!NOT_FAILURES.has(err.name) && isFinalFailure(job, err)) {
      // Best effort: if this throws, the `failed` listener retries it after the commit.
      await this.settle.failed(job, err).catch(() => undefined);
      killPoint('before-fail');
    }
    return super.handleFailed(err, job, token, fetchNextCallback, span);
  }
}

/**
 * The job as the sandbox sends it to the child, with the thread budget beside its data (the
 * child reads it with readThreadBudget); the job itself, its data and the contract are unchanged.
 */
function withThreadBudget(job: AnalysisJob, threads: number): AnalysisJob {
  return Object.create(job, {
    asJSONSandbox: { value: () => ({ ...job.asJSONSandbox(), analysisThreads: threads }) },
    // Progress lands on the job itself, as without the wrapper.
    updateProgress: { value: (progress: number | object) => job.updateProgress(progress) },
  });
}

/** Stable per job and outcome: the webhook job's id and the `Earmark-Delivery` header. */
export function deliveryIdOf(jobId: string, event: Exclude<JobEvent, 'job.signed_off'>): string {
  return `dlv_${jobId}_${event === 'job.completed' ? 'c' : 'f'}`;
}

export interface WorkerRuntime {
  /** One retention pass now, the one the worker runs every 10 minutes (or every retention period,
   * if shorter); maxAgeMs defaults to EARMARK_RETENTION_HOURS. Returns how many files went. */
  sweep(maxAgeMs?: number): Promise<number>;
  /** Stops taking jobs; waits up to shutdownTimeoutMs for active ones, then hands them back. */
  close(): Promise<{ handedBack: number }>;
}

export async function startWorker(config: Config, log: Logger): Promise<WorkerRuntime> {
  const redis: Redis = createRedis(config.redisUrl, 'worker');
  redis.on('error', (error) => log.warn({ err: { message: error.message } }, 'redis connection error'));
  await waitReady(redis, 10_000);
  const storage = await openStorage(config.storage, config.storageDir);
  const store = openServiceStores(redis, config.queuePrefix, config.retentionHours * 3600);
  const policy = new UrlPolicy(config.urlAllowlist);
  const onError = (error: Error, where: string) => log.error({ err: { message: error.message }, where }, 'queue error');
  const webhookQueue = createWebhookQueue(redis, config, onError);
  const analysisQueue = createAnalysisQueue(redis, config, onError);
  const packageQueue = createPackageQueue(redis, config, onError);

  async function enqueueWebhook(
    job: AnalysisJob,
    event: Exclude<JobEvent, 'job.signed_off'>,
    view: JobView,
  ): Promise<void> {
    if (!job.data.callbackUrl) return;
    const jobId = String(job.id);
    const deliveryId = deliveryIdOf(jobId, event);
    const body = JSON.stringify({
      event,
      deliveryId,
      job: { ...view, callback: { url: job.data.callbackUrl, deliveries: [] } },
    });
    // jobId = deliveryId: a re-run (or the listener's backstop) adding it again is dropped by BullMQ.
    await webhookQueue.add(
      DELIVER_WEBHOOK_V1,
      { jobId, tenant: job.data.tenant, url: job.data.callbackUrl, event, deliveryId, body },
      { jobId: deliveryId },
    );
  }

  // The job as it will read once committed (moveToCompleted/moveToFailed set these and count the attempt).
  const asFinished = (job: AnalysisJob, fields: Partial<AnalysisJob>): AnalysisJob =>
    Object.assign(Object.create(job) as AnalysisJob, {
      finishedOn: Date.now(),
      attemptsMade: job.attemptsMade + 1,
      ...fields,
    });

  const settlement: Settlement = {
    async completed(job, result) {
      const jobId = String(job.id);
      const json = await storage.readReport(jobId);
      if (!json) throw new Error('the report the analysis wrote is missing');
      await store.reports.put(jobId, json);
      await store.outcomes.record(jobId, 'completed', result.analysisSeconds);
      await enqueueWebhook(job, 'job.completed', jobView(asFinished(job, { returnvalue: result }), 'completed', []));
    },
    async failed(job, error) {
      const jobId = String(job.id);
      await store.outcomes.record(jobId, 'failed', null);
      const view = jobView(asFinished(job, { failedReason: error.message }), 'failed', []);
      await enqueueWebhook(job, 'job.failed', view);
    },
  };

  const childSettings = childSettingsOf(config);
  const analysis = new AnalysisWorker(
    PROCESSOR_FILE,
    {
      connection: redis,
      prefix: config.queuePrefix,
      concurrency: config.workerConcurrency,
      useWorkerThreads: false,
      workerForkOptions: {
        execArgv: CHILD_EXEC_ARGV,
        env: { ...process.env, [CHILD_SETTINGS_ENV]: JSON.stringify(childSettings) },
      },
      // A child that dies takes its job with it; the stall check hands such jobs to a live worker.
      maxStalledCount: 2,
      lockDuration: config.lockDurationMs,
      stalledInterval: config.stalledIntervalMs,
    },
    settlement,
    async (otherActiveJobs) => {
      if (config.analysisThreads < 2 || otherActiveJobs > 0) return 1;
      // One round trip, only when this worker is otherwise idle; a Redis fault costs the split, not the job.
      const waitingJobs = await analysisQueue.getJobCountByTypes('wait', 'prioritized').catch(() => 1);
      return threadBudget({ maxThreads: config.analysisThreads, otherActiveJobs, waitingJobs });
    },
  );
  const active = new Map<string, AnalysisJob>();
  analysis.on('error', (error) => onError(error, 'analysis worker'));
  // A fault here costs fairness for a moment, never the job.
  followClock(analysis, analysisQueue, store.fairShare, (error) => onError(error, 'fair share'));
  analysis.on('active', (job) => {
    active.set(String(job.id), job);
    log.info({ jobId: job.id, attempt: job.attemptsMade + 1 }, 'job started');
  });

  analysis.on('completed', (job, result) => {
    active.delete(String(job.id));
    log.info({ jobId: job.id, verdict: result.verdict }, 'job completed');
    killPoint('after-complete');
  });

  analysis.on('failed', (job, error) => {
    if (!job) return;
    active.delete(String(job.id));
    killPoint('after-fail');
    void (async () => {
      const state = await job.getState();
      log.warn(
        { jobId: job.id, reason: error.message, state },
        state === 'failed' ? 'job failed' : 'job attempt failed, will retry',
      );
      if (state !== 'failed') return;
      // Backstop, idempotent: handleFailed above could not write (Redis refused); dropped as duplicates otherwise.
      const committed = await Job.fromId<AnalyzeJobV1, AnalyzeResultV1>(analysisQueue, String(job.id));
      if (!committed) return;
      await store.outcomes.record(String(job.id), 'failed', null);
      await enqueueWebhook(committed, 'job.failed', jobView(committed, 'failed', []));
    })().catch((e: unknown) =>
      log.error({ jobId: job.id, err: { message: toEarmarkError(e).message } }, 'after-failure step failed'),
    );
  });

  const webhooks = new Worker<DeliverWebhookV1>(
    WEBHOOK_QUEUE,
    async (job, token) => {
      if (job.name !== DELIVER_WEBHOOK_V1) throw new UnrecoverableError(`unknown job name ${job.name}`);
      const d = job.data;
      // Added before the analysis outcome is committed: send only once it is, and never an outcome
      // a re-run replaced (a crash before the commit re-runs the job, which may end otherwise).
      const packageEvent = d.event === 'package.completed' || d.event === 'package.failed';
      const state = await (packageEvent ? packageQueue : analysisQueue).getJobState(d.jobId);
      // A sign-off (added by the API) is only ever made on a completed job.
      if (state !== (d.event === 'job.failed' || d.event === 'package.failed' ? 'failed' : 'completed')) {
        if (state === 'completed' || state === 'failed' || state === 'unknown') {
          log.info({ jobId: d.jobId, deliveryId: d.deliveryId, state }, 'webhook dropped: the job ended otherwise');
          return;
        }
        // Still active (committing, or stalled and awaiting its re-run): look again soon, without using an attempt.
        const waits = Math.max(0, job.attemptsStarted - job.attemptsMade - 1);
        await job.moveToDelayed(Date.now() + Math.min(2_000, 50 * 2 ** Math.min(waits, 6)), token);
        throw new DelayedError();
      }
      const secret = config.webhookSecrets[d.tenant] ?? config.webhookDefaultSecret;
      const attempt = job.attemptsMade + 1;
      const record = (outcome: 'delivered' | 'retrying' | 'failed', statusCode: number | null, error: string | null) =>
        store.deliveries.add(d.jobId, {
          deliveryId: d.deliveryId,
          event: d.event,
          attempt,
          at: new Date().toISOString(),
          statusCode,
          outcome,
          error,
        });
      if (!secret) {
        await record('failed', null, 'no webhook secret is configured for this tenant');
        throw new UnrecoverableError('no webhook secret');
      }
      try {
        const { statusCode } = await deliver(policy, {
          url: d.url,
          secret,
          deliveryId: d.deliveryId,
          event: d.event,
          body: d.body,
          timeoutMs: config.webhookTimeoutMs,
        });
        await record('delivered', statusCode, null);
        log.info({ jobId: d.jobId, deliveryId: d.deliveryId, attempt }, 'webhook delivered');
      } catch (thrown) {
        const error = toEarmarkError(thrown);
        const final = !isRetryable(error) || attempt >= (job.opts.attempts ?? 1);
        const statusCode = typeof error.details.statusCode === 'number' ? error.details.statusCode : null;
        await record(final ? 'failed' : 'retrying', statusCode, error.message);
        log.warn({ jobId: d.jobId, deliveryId: d.deliveryId, attempt, final }, 'webhook delivery failed');
        if (final) throw new UnrecoverableError(error.message);
        throw new Error(error.message);
      }
    },
    {
      connection: redis,
      prefix: config.queuePrefix,
      concurrency: 4,
      // A delivery in flight on a killed worker is re-run after the same stall bounds as analysis.
      lockDuration: config.lockDurationMs,
      stalledInterval: config.stalledIntervalMs,
    },
  );
  webhooks.on('error', (error) => onError(error, 'webhook worker'));

  const packages = startPackageWorker({ config, redis, store, storage, analysisQueue, webhookQueue, log, onError });

  const retentionMs = config.retentionHours * 3_600_000;
  const sweep = async (maxAgeMs = retentionMs): Promise<number> => {
    const swept = await retentionPass(storage, store.reports, maxAgeMs);
    const removed = swept.keys.length + swept.tempFiles;
    if (removed > 0) log.info({ removed }, 'retention sweep');
    return removed;
  };
  const sweeper = setInterval(
    () => {
      sweep().catch((error: unknown) =>
        log.warn({ err: { message: toEarmarkError(error).message } }, 'retention sweep failed'),
      );
    },
    Math.min(retentionMs, 600_000),
  );
  sweeper.unref();
  log.info(
    {
      concurrency: config.workerConcurrency,
      analysisThreads: config.analysisThreads,
      bundledChild: BUNDLED_PROCESSOR !== null,
      jobName: ANALYZE_JOB_V1,
    },
    'worker ready',
  );

  return {
    sweep,
    async close() {
      clearInterval(sweeper);
      let timer: NodeJS.Timeout | undefined;
      const drained = await Promise.race([
        Promise.all([analysis.pause(), packages.worker.pause()]).then(() => true),
        new Promise<boolean>((resolve) => {
          timer = setTimeout(() => resolve(false), config.shutdownTimeoutMs);
        }),
      ]);
      clearTimeout(timer);
      let handedBack = 0;
      if (!drained) {
        // Back to the wait list at once, so another worker takes them without waiting for a stall check.
        for (const job of [...active.values(), ...packages.active.values()]) {
          if (
            job.token &&
            (await job.moveToWait(job.token).then(
              () => true,
              () => false,
            ))
          )
            handedBack += 1;
        }
        // A package check handed back ends with its thread (its lock is gone, so its failure is not recorded).
        await packages.runner.close();
        log.warn({ handedBack }, 'shutdown bound reached: active jobs handed back');
      }
      await analysis.close(!drained);
      await packages.worker.close(!drained);
      await webhooks.close();
      await webhookQueue.close();
      await analysisQueue.close();
      await packageQueue.close();
      await redis.quit().catch(() => undefined);
      return { handedBack };
    },
  };
}
