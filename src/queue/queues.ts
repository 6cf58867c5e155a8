// BullMQ queue factories with an `error` listener on each (an unhandled 'error' event would
// crash the process). Retry policy lives here: exponential backoff; bad input opts out by
// throwing UnrecoverableError in the processor.

import { Queue, type ConnectionOptions } from 'bullmq';
import type { Config } from '../config/index.ts';
import { ANALYSIS_QUEUE, WEBHOOK_QUEUE, type AnalyzeJobV1, type DeliverWebhookV1 } from './contract.ts';
import { PACKAGE_QUEUE, type CheckPackageJobV1, type CheckPackageResultV1 } from './package-contract.ts';

export type AnalysisQueue = Queue<AnalyzeJobV1>;
export type WebhookQueue = Queue<DeliverWebhookV1>;
export type PackageQueue = Queue<CheckPackageJobV1, CheckPackageResultV1>;

type OnError = (error: Error, where: string) => void;

export function createAnalysisQueue(connection: ConnectionOptions, config: Config, onError: OnError): AnalysisQueue {
  const retentionSeconds = config.retentionHours * 3600;
  const queue = new Queue<AnalyzeJobV1>(ANALYSIS_QUEUE, {
    connection,
    prefix: config.queuePrefix,
    defaultJobOptions: {
      attempts: config.jobAttempts,
      backoff: { type: 'exponential', delay: config.jobBackoffMs },
      removeOnComplete: { age: retentionSeconds },
      removeOnFail: { age: retentionSeconds },
    },
  });
  queue.on('error', (error) => onError(error, 'analysis queue'));
  return queue;
}

export function createWebhookQueue(connection: ConnectionOptions, config: Config, onError: OnError): WebhookQueue {
  const queue = new Queue<DeliverWebhookV1>(WEBHOOK_QUEUE, {
    connection,
    prefix: config.queuePrefix,
    defaultJobOptions: {
      attempts: config.webhookAttempts,
      backoff: { type: 'exponential', delay: config.webhookBackoffMs },
      removeOnComplete: { age: config.retentionHours * 3600 },
      removeOnFail: { age: config.retentionHours * 3600 },
    },
  });
  queue.on('error', (error) => onError(error, 'webhook queue'));
  return queue;
}

/** Package jobs: a job waiting on its members moves itself to delayed (no attempt used); a
 * fault retries with the analysis' backoff. */
export function createPackageQueue(connection: ConnectionOptions, config: Config, onError: OnError): PackageQueue {
  const queue = new Queue<CheckPackageJobV1, CheckPackageResultV1>(PACKAGE_QUEUE, {
    connection,
    prefix: config.queuePrefix,
    defaultJobOptions: {
      attempts: config.jobAttempts,
      backoff: { type: 'exponential', delay: config.jobBackoffMs },
      removeOnComplete: { age: config.retentionHours * 3600 },
      removeOnFail: { age: config.retentionHours * 3600 },
    },
  });
  queue.on('error', (error) => onError(error, 'package queue'));
  return queue;
}
