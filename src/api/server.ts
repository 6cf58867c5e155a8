// Builds the API's dependencies (fail-fast Redis connection, queue, stores, storage), the app,
// and listens. close() stops accepting, lets in-flight requests finish (bounded), then closes.

import type { FastifyInstance } from 'fastify';
import type { Logger } from 'pino';
import type { Config } from '../config/index.ts';
import { UrlPolicy } from '../net/url-guard.ts';
import { createRedis, waitReady } from '../queue/connection.ts';
import { JobsRepository } from '../queue/jobs-repository.ts';
import { ProfileStore } from '../queue/profile-store.ts';
import { createAnalysisQueue } from '../queue/queues.ts';
import { openServiceStores } from '../queue/store.ts';
import { openStorage } from '../storage/index.ts';
import { buildApp } from './app.ts';
import { ApiMetrics } from './metrics.ts';
import type { AppDeps } from './deps.ts';

export interface RunningApi {
  app: FastifyInstance;
  deps: AppDeps;
  url: string;
  close(): Promise<void>;
}

export async function startApi(config: Config, logger?: Logger): Promise<RunningApi> {
  const redis = createRedis(config.redisUrl, 'api');
  let app: FastifyInstance | null = null;
  const log = (message: string, error: Error) => app?.log.warn({ err: { message: error.message } }, message);
  redis.on('error', (error) => log('redis connection error', error));
  await waitReady(redis, 5_000);
  const storage = await openStorage(config.storage, config.storageDir, {
    partialTouchMs: Math.min(10_000, Math.floor(config.bodyTimeoutMs / 2)),
    copyLimitBytes: Math.max(config.uploadLimitBytes, config.fetchLimitBytes),
    shortLivedCopies: true,
  });
  // Partial uploads of a killed process, then of requests that died without cleaning up: a live
  // transfer's temp file is touched while bytes arrive, and they arrive at least once per body
  // (upload) or fetch (sourceUrl, in a worker) idle timeout, or the transfer is ended.
  const partialAgeMs = 2 * Math.max(config.bodyTimeoutMs, config.fetchTimeoutMs);
  const sweepPartials = () =>
    storage.sweepPartials(partialAgeMs).then(
      (n) => {
        if (n > 0) app?.log.info({ removed: n }, 'partial uploads removed');
      },
      () => undefined,
    );
  await sweepPartials();
  const sweeper = setInterval(sweepPartials, Math.max(1_000, Math.min(partialAgeMs, 10 * 60_000)));
  sweeper.unref();
  const queue = createAnalysisQueue(redis, config, (error) => log('analysis queue error', error));
  const store = openServiceStores(redis, config.queuePrefix, config.retentionHours * 3600);
  const deps: AppDeps = {
    redis,
    queue,
    storage,
    store,
    jobs: new JobsRepository(redis, queue, store.index, store.reports, config.queuePrefix, (jobId) =>
      storage.readReport(jobId),
    ),
    profiles: new ProfileStore(redis, config.queuePrefix),
    policy: new UrlPolicy(config.urlAllowlist),
    metrics: new ApiMetrics(),
  };
  app = await buildApp(config, deps, logger);
  const address = await app.listen({ port: config.port, host: config.host });
  const running = app;
  return {
    app: running,
    deps,
    url: address.replace('0.0.0.0', '127.0.0.1'),
    async close() {
      clearInterval(sweeper);
      let timer: NodeJS.Timeout | undefined;
      await Promise.race([
        running.close(),
        new Promise((resolve) => {
          timer = setTimeout(resolve, config.shutdownTimeoutMs);
        }),
      ]);
      clearTimeout(timer);
      await queue.close().catch(() => undefined);
      await redis.quit().catch(() => redis.disconnect());
    },
  };
}
