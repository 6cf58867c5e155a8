// The package Worker (in process): a package job waits, without using an attempt, until every
// member job has finished (it moves itself to delayed and looks again, up to the package wait);
// a member that failed or is gone fails the package, naming it. Then the set check runs on a
// thread (package-set-runner.ts) over local copies of the members' stored audio, and the package
// report is put together from each member's own report (no member is analysed again).
//
// Written before BullMQ commits the outcome, and idempotently (same keys, the webhook job's id is
// its delivery id), as the analysis settlement in runtime.ts is: a re-run after a crash repeats them.

import { DelayedError, UnrecoverableError, Worker, type Job } from 'bullmq';
import type { Redis } from 'ioredis';
import type { Logger } from 'pino';
import type { Config } from '../config/index.ts';
import { EarmarkError, isRetryable, toEarmarkError } from '../errors/index.ts';
import type { PackageSetResult } from '../engine/package-set.ts';
import { packageReport, type PackageMemberResult } from '../packages/check-package.ts';
import { reportFromText } from '../profiles/report-json.ts';
import { decodeFailure, decodeFailureError, DELIVER_WEBHOOK_V1, encodeFailure } from '../queue/contract.ts';
import { JobsRepository, type AnalysisJob, type LoadedJob } from '../queue/jobs-repository.ts';
import {
  CHECK_PACKAGE_V1,
  PACKAGE_QUEUE,
  type CheckPackageJobV1,
  type CheckPackageResultV1,
  type PackageEvent,
} from '../queue/package-contract.ts';
import type { AnalysisQueue, WebhookQueue } from '../queue/queues.ts';
import { memberFileName, packageView, type PackageView } from '../queue/package-view.ts';
import type { ServiceStores } from '../queue/store.ts';
import type { LocalCopy, Storage } from '../storage/index.ts';
import { PackageSetRunner } from './package-set-runner.ts';

export type PackageJob = Job<CheckPackageJobV1, CheckPackageResultV1>;

export interface PackageWorkerDeps {
  config: Config;
  redis: Redis;
  store: ServiceStores;
  storage: Storage;
  analysisQueue: AnalysisQueue;
  webhookQueue: WebhookQueue;
  log: Logger;
  onError(error: Error, where: string): void;
}

/** Stable per package and outcome: the webhook job's id and the `Earmark-Delivery` header. */
export const packageDeliveryId = (packageId: string, event: PackageEvent) =>
  `dlv_${packageId}_${event === 'package.completed' ? 'c' : 'f'}`;

/** Looks again soon while members are unfinished: 250 ms, doubling to 5 s. */
function nextLookMs(job: PackageJob): number {
  const looks = Math.max(0, (job.attemptsStarted ?? 0) - job.attemptsMade - 1);
  return Math.min(5_000, 250 * 2 ** Math.min(looks, 5));
}

export function startPackageWorker(deps: PackageWorkerDeps) {
  const { config, store, storage, log } = deps;
  const jobs = new JobsRepository(
    deps.redis,
    deps.analysisQueue,
    store.index,
    store.reports,
    config.queuePrefix,
    (jobId) => storage.readReport(jobId),
  );
  const runner = new PackageSetRunner();

  async function enqueueWebhook(job: PackageJob, event: PackageEvent, view: PackageView): Promise<void> {
    const d = job.data;
    if (!d.callbackUrl) return;
    const deliveryId = packageDeliveryId(d.packageId, event);
    const body = JSON.stringify({ event, deliveryId, package: view });
    await deps.webhookQueue.add(
      DELIVER_WEBHOOK_V1,
      { jobId: d.packageId, tenant: d.tenant, url: d.callbackUrl, event, deliveryId, body },
      { jobId: deliveryId },
    );
  }

  /** Every member finished, or the reason the package cannot be checked (null: look again later). */
  async function finishedMembers(job: PackageJob): Promise<Map<string, LoadedJob> | null> {
    const d = job.data;
    const loaded = await jobs.read(
      d.tenant,
      d.members.map((m) => m.jobId),
    );
    for (const { jobId, role } of d.members) {
      const member = loaded.get(jobId);
      if (!member)
        throw new EarmarkError(
          'package_member_failed',
          `the ${role} job ${jobId} is gone (past its retention period)`,
          {
            jobId,
            role,
          },
        );
      if (member.state === 'failed') {
        const cause = decodeFailureError(member.job.failedReason);
        const fileName = memberFileName(member.job);
        throw new EarmarkError(
          'package_member_failed',
          `the ${role} ${fileName} (job ${jobId}) failed its own check: ${cause.message} (${cause.code})`,
          { jobId, role, fileName, memberError: cause },
        );
      }
    }
    const unfinished = d.members.filter((m) => loaded.get(m.jobId)?.state !== 'completed');
    if (unfinished.length === 0) return loaded;
    const waitedMs = Date.now() - Date.parse(d.submittedAt);
    if (waitedMs > config.packageWaitMs)
      throw new EarmarkError(
        'package_wait_exceeded',
        `${unfinished.map((m) => `the ${m.role} job ${m.jobId}`).join(', ')} had not finished ${Math.round(waitedMs / 1000)} s after the package was submitted (the package wait is ${config.packageWaitMs / 1000} s)`,
        { jobIds: unfinished.map((m) => m.jobId), packageWaitMs: config.packageWaitMs },
      );
    return null;
  }

  /** A local copy of a finished member's audio: its upload, its fetched copy, or its s3:// source. */
  function copyOf(job: AnalysisJob): Promise<LocalCopy> {
    const { source } = job.data;
    if (source.kind === 'upload') return storage.localCopy(source.storageKey);
    if (source.url.startsWith('s3://')) return storage.copySource(source.url, config.fetchLimitBytes);
    const kept = job.returnvalue?.sourceKey;
    if (!kept) throw new EarmarkError('audio_expired', `job ${String(job.id)} kept no copy of its audio`);
    return storage.localCopy(kept);
  }

  async function checkSet(job: PackageJob, loaded: Map<string, LoadedJob>): Promise<CheckPackageResultV1> {
    const d = job.data;
    const named = d.members.map(({ jobId, role }) => {
      const member = loaded.get(jobId)!;
      return { jobId, role, job: member.job, fileName: memberFileName(member.job) };
    });
    // Two files of one name (from different folders) are told apart by their job ids.
    const nameOf = (m: (typeof named)[number]) =>
      named.filter((o) => o.fileName === m.fileName).length > 1 ? `${m.fileName} [${m.jobId}]` : m.fileName;
    const members: PackageMemberResult[] = [];
    for (const m of named) {
      const report = reportFromText(await jobs.report(d.tenant, m.jobId), `the report of job ${m.jobId}`);
      members.push({ name: nameOf(m), role: m.role, verdict: report.verdict, headline: report.headline, report });
    }
    const copies: { copy: LocalCopy; name: string }[] = [];
    let set: PackageSetResult;
    try {
      for (const m of named) copies.push({ copy: await copyOf(m.job), name: nameOf(m) });
      set = await runner.run({
        members: named.map((m, i) => ({
          path: copies[i].copy.path,
          name: nameOf(m),
          role: m.role,
          profile: m.job.data.profile,
        })),
        toleranceDb: d.toleranceDb,
        maxDecodedSeconds: config.maxDecodedSeconds,
      });
    } catch (thrown) {
      // Decoder messages name files by path: clients get the members' file names instead.
      const error = toEarmarkError(thrown);
      const scrub = (text: string) =>
        copies
          .reduce((t, c) => t.split(c.copy.path).join(c.name), text)
          .split(config.storageDir)
          .join('storage');
      throw new EarmarkError(error.code, scrub(error.message), {
        ...Object.fromEntries(Object.entries(error.details).map(([k, v]) => [k, typeof v === 'string' ? scrub(v) : v])),
      });
    } finally {
      await Promise.all(copies.map((c) => c.copy.release().catch(() => undefined)));
    }
    // The mix's profile (or the first version's) names the package and gives its frame rate.
    const lead = named.find((m) => m.role !== 'stem') ?? named[0];
    const report = packageReport(lead.job.data.profile, members, set);
    const json = JSON.stringify(report);
    const reportKey = await storage.writeReport(d.packageId, json);
    await store.reports.put(d.packageId, json);
    const result: CheckPackageResultV1 = { verdict: report.verdict, headline: report.headline, reportKey };
    await enqueueWebhook(
      job,
      'package.completed',
      packageView(d, 'completed', {
        result,
        report,
        finishedAtMs: Date.now(),
        error: null,
        members: loaded,
        deliveries: [],
      }),
    );
    return result;
  }

  async function processPackage(job: PackageJob, token: string | undefined): Promise<CheckPackageResultV1> {
    if (job.name !== CHECK_PACKAGE_V1)
      throw new UnrecoverableError(encodeFailure('invalid_argument', `this worker does not know job name ${job.name}`));
    try {
      const loaded = await finishedMembers(job);
      if (!loaded) {
        await job.moveToDelayed(Date.now() + nextLookMs(job), token);
        throw new DelayedError();
      }
      return await checkSet(job, loaded);
    } catch (thrown) {
      if (thrown instanceof DelayedError) throw thrown;
      const error = toEarmarkError(thrown);
      // An unexpected error's words stay in the log: clients get the code.
      const message = error.code === 'internal_error' ? 'the package check failed unexpectedly' : error.message;
      const reason = encodeFailure(error.code, message, error.code === 'internal_error' ? {} : error.details);
      const final = !isRetryable(error) || job.attemptsMade + 1 >= (job.opts.attempts ?? 1);
      log.warn(
        { packageId: job.data.packageId, code: error.code, err: { message: error.message }, final },
        'package check failed',
      );
      if (!final) throw new Error(reason);
      const members = await jobs.read(
        job.data.tenant,
        job.data.members.map((m) => m.jobId),
      );
      await enqueueWebhook(
        job,
        'package.failed',
        packageView(job.data, 'failed', {
          result: null,
          report: null,
          finishedAtMs: Date.now(),
          error: { code: error.code, message },
          members,
          deliveries: [],
        }),
      ).catch((e: unknown) => deps.onError(toEarmarkError(e), 'package webhook'));
      throw new UnrecoverableError(reason);
    }
  }

  /** Package jobs in the processor now, for the shutdown's hand-back. */
  const active = new Map<string, PackageJob>();
  const worker = new Worker<CheckPackageJobV1, CheckPackageResultV1>(
    PACKAGE_QUEUE,
    async (job, token) => {
      active.set(String(job.id), job);
      try {
        return await processPackage(job, token);
      } finally {
        active.delete(String(job.id));
      }
    },
    {
      connection: deps.redis,
      prefix: config.queuePrefix,
      concurrency: config.workerConcurrency,
      maxStalledCount: 2,
      lockDuration: config.lockDurationMs,
      stalledInterval: config.stalledIntervalMs,
    },
  );
  worker.on('error', (error) => deps.onError(error, 'package worker'));
  // Backstop for failures the processor did not see (a job stalled too often is failed by BullMQ
  // on its next pick-up): the webhook job's id is its delivery id, so a second add is dropped.
  worker.on('failed', (job) => {
    if (!job) return;
    void (async () => {
      if ((await job.getState()) !== 'failed') return;
      const members = await jobs.read(
        job.data.tenant,
        job.data.members.map((m) => m.jobId),
      );
      const error = decodeFailure(job.failedReason);
      const view = packageView(job.data, 'failed', {
        result: null,
        report: null,
        finishedAtMs: job.finishedOn ?? Date.now(),
        error,
        members,
        deliveries: [],
      });
      await enqueueWebhook(job, 'package.failed', view);
    })().catch((e: unknown) => deps.onError(toEarmarkError(e), 'package webhook'));
  });
  worker.on('completed', (job, result) =>
    log.info({ packageId: job.data.packageId, verdict: result.verdict }, 'package completed'),
  );
  return { worker, runner, active };
}
