// A real service for tests: the API listening on a random port and (optionally) a worker, both
// against the tests' real Redis (testRedisUrl) under a unique prefix, storage in a temp folder
// or, given an S3 server, in its bucket under a prefix of the service's own, the API and the
// worker then each with a local folder of its own (they share nothing but Redis and the bucket).
// close() stops both and removes every key under the prefix and the folders.

import { randomBytes } from 'node:crypto';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pino from 'pino';
import { startApi, type RunningApi } from '../../src/api/server.ts';
import { loadConfig, type Config } from '../../src/config/index.ts';
import { purgePrefix } from '../../src/queue/service-keys.ts';
import { startWorker, type WorkerRuntime } from '../../src/worker/runtime.ts';
import { testRedisUrl } from '../helpers/redis.ts';
import type { TestS3 } from '../helpers/s3-server.ts';

export const KEYS = {
  alpha: 'alpha-submit-read-key-0001',
  alphaReadOnly: 'alpha-read-only-key-000002',
  alphaAdmin: 'alpha-admin-key-0000000003',
  beta: 'beta-submit-read-key-00004',
};
export const WEBHOOK_SECRET = 'test-webhook-secret-alpha-01';

export const API_KEYS = JSON.stringify([
  { key: KEYS.alpha, tenant: 'alpha', scopes: ['submit', 'read'] },
  { key: KEYS.alphaReadOnly, tenant: 'alpha', scopes: ['read'] },
  { key: KEYS.alphaAdmin, tenant: 'alpha', scopes: ['admin'] },
  { key: KEYS.beta, tenant: 'beta', scopes: ['submit', 'read'] },
]);

export function testEnv(dir: string, extra: Record<string, string> = {}): Record<string, string> {
  return {
    REDIS_URL: testRedisUrl(),
    PORT: '0',
    HOST: '127.0.0.1',
    EARMARK_QUEUE_PREFIX: `t${randomBytes(6).toString('hex')}`,
    EARMARK_STORAGE_DIR: dir,
    EARMARK_API_KEYS: API_KEYS,
    EARMARK_UPLOAD_LIMIT_BYTES: String(5 * 1024 * 1024),
    EARMARK_URL_ALLOWLIST: '127.0.0.1',
    EARMARK_WEBHOOK_SECRETS: JSON.stringify({ alpha: WEBHOOK_SECRET }),
    EARMARK_WEBHOOK_BACKOFF_MS: '200',
    EARMARK_JOB_BACKOFF_MS: '200',
    EARMARK_SHUTDOWN_TIMEOUT_MS: '10000',
    EARMARK_LOG_LEVEL: 'silent',
    ...extra,
  };
}

export interface TestService {
  url: string;
  config: Config;
  env: Record<string, string>;
  /** The API's folder: the file backend's root, or the API's own local folder with S3. */
  dir: string;
  /** The worker's local folder (the same as dir on the file backend). */
  workerDir: string;
  api: RunningApi;
  worker: WorkerRuntime | null;
  close(): Promise<void>;
}

export async function startService(
  options: { worker?: boolean; env?: Record<string, string>; s3?: TestS3 } = {},
): Promise<TestService> {
  const dir = mkdtempSync(join(tmpdir(), 'earmark-svc-'));
  const storageEnv = options.s3 ? options.s3.env(`svc-${randomBytes(4).toString('hex')}`) : {};
  const env = testEnv(dir, { ...storageEnv, ...options.env });
  const config = loadConfig(env);
  const workerDir = options.s3 ? mkdtempSync(join(tmpdir(), 'earmark-svc-worker-')) : dir;
  const workerConfig = loadConfig({ ...env, EARMARK_STORAGE_DIR: workerDir });
  const log = pino({ level: process.env.EARMARK_TEST_LOG ?? 'silent' });
  const worker = options.worker === false ? null : await startWorker(workerConfig, log);
  const api = await startApi(config, log);
  return {
    url: api.url,
    config,
    env,
    dir,
    workerDir,
    api,
    worker,
    async close() {
      await api.close();
      await worker?.close();
      const { createRedis } = await import('../../src/queue/connection.ts');
      const redis = createRedis(config.redisUrl, 'worker');
      await purgePrefix(redis, config.queuePrefix);
      await redis.quit();
      rmSync(dir, { recursive: true, force: true });
      rmSync(workerDir, { recursive: true, force: true });
    },
  };
}

export const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

/** Polls until check returns a value (no timing assertion: the test's own timeout bounds it). */
export async function until<T>(check: () => Promise<T | null | undefined | false>, everyMs = 100): Promise<T> {
  for (;;) {
    const value = await check();
    if (value) return value;
    await sleep(everyMs);
  }
}
