// The one environment schema. Read once at start; a bad value throws ConfigError naming the
// variable, and the entrypoints print it and exit (no half-configured process).

import { availableParallelism, tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

// admin (profile edits) implies submit and read only: metrics and the all-tenant view
// (operator) are granted separately, so a tenant's admin key sees only its own tenant.
export type Scope = 'submit' | 'read' | 'admin' | 'metrics' | 'operator';
export const SCOPES: readonly Scope[] = ['submit', 'read', 'admin', 'metrics', 'operator'];

export interface ApiKey {
  key: string;
  tenant: string;
  scopes: Scope[];
}

/** Where uploads and reports live: EARMARK_STORAGE_URL (`file:///path` or `s3://bucket/prefix`). */
export type StorageLocation =
  | { kind: 'file'; dir: string }
  | {
      kind: 's3';
      bucket: string;
      /** Key prefix without slashes at either end; '' for the bucket's root. */
      prefix: string;
      /** AWS_ENDPOINT_URL_S3 or AWS_ENDPOINT_URL; null for AWS's own. */
      endpoint: string | null;
      region: string;
      /** EARMARK_S3_FORCE_PATH_STYLE: bucket in the path, for servers without virtual-host addressing. */
      forcePathStyle: boolean;
      /** EARMARK_S3_SOURCE_BUCKETS: buckets of the same store an `s3://` sourceUrl may name. */
      sourceBuckets: string[];
    };

export interface Config {
  port: number;
  host: string;
  redisUrl: string;
  /** False when REDIS_URL was not set: the entrypoint may then start a private redis-server. */
  redisUrlExplicit: boolean;
  queuePrefix: string;
  apiKeys: ApiKey[];
  storage: StorageLocation;
  /** The file backend's root; with the S3 backend, this host's own folder for temp copies. */
  storageDir: string;
  uploadLimitBytes: number;
  fetchLimitBytes: number;
  fetchTimeoutMs: number;
  /** Whole-fetch bound of a sourceUrl, however steadily it drips. */
  fetchDeadlineMs: number;
  /** API: whole request (headers and body) must arrive within this. */
  requestTimeoutMs: number;
  /** API: a connection that sends or receives nothing for this long is closed (408 if a request is open). */
  bodyTimeoutMs: number;
  urlAllowlist: string[];
  /** Analysis jobs per worker process at once (one child process each); the cores by default. */
  workerConcurrency: number;
  /** Most threads one job's analysis may use, when it runs alone (worker/thread-policy.ts); the cores by default. */
  analysisThreads: number;
  retentionHours: number;
  jobAttempts: number;
  jobBackoffMs: number;
  webhookSecrets: Record<string, string>;
  webhookDefaultSecret: string | null;
  webhookAttempts: number;
  webhookBackoffMs: number;
  webhookTimeoutMs: number;
  shutdownTimeoutMs: number;
  /** Analysis job lock; a worker that dies loses it after this, and the stall check hands the job on. */
  lockDurationMs: number;
  stalledIntervalMs: number;
  /** Requests per minute per API key (0: no limit). */
  rateLimitPerMinute: number;
  logLevel: string;
  /** An analysis child whose RSS is above this after a job exits and is replaced. */
  childRssLimitMb: number;
  /** Longest audio any file may decode to; longer is decoded_size_exceeded, checked while decoding. */
  maxDecodedSeconds: number;
  /** A package whose files have not all finished this long after it was submitted fails. */
  packageWaitMs: number;
}

export class ConfigError extends Error {
  constructor(
    readonly variable: string,
    message: string,
  ) {
    super(`${variable}: ${message}`);
    this.name = 'ConfigError';
  }
}

type Env = Record<string, string | undefined>;

function int(env: Env, name: string, fallback: number, min: number, max = Number.MAX_SAFE_INTEGER): number {
  const raw = env[name];
  if (raw === undefined || raw === '') return fallback;
  if (!/^\d+$/.test(raw.trim())) throw new ConfigError(name, `expected a whole number, got "${raw.slice(0, 40)}"`);
  const value = Number(raw);
  if (value < min || value > max) throw new ConfigError(name, `must be between ${min} and ${max}`);
  return value;
}

function json(env: Env, name: string): unknown {
  try {
    return JSON.parse(env[name] ?? '');
  } catch {
    throw new ConfigError(name, 'is not valid JSON');
  }
}

function apiKeys(env: Env): ApiKey[] {
  if (!env.EARMARK_API_KEYS) return [];
  const value = json(env, 'EARMARK_API_KEYS');
  if (!Array.isArray(value))
    throw new ConfigError('EARMARK_API_KEYS', 'expected a JSON array of {key, tenant, scopes}');
  return value.map((entry: unknown, i) => {
    const e = entry as Partial<ApiKey> | null;
    const at = `entry ${i}`;
    if (!e || typeof e.key !== 'string' || e.key.length < 16)
      throw new ConfigError('EARMARK_API_KEYS', `${at}: key must be a string of at least 16 characters`);
    if (typeof e.tenant !== 'string' || !/^[A-Za-z0-9_-]{1,64}$/.test(e.tenant))
      throw new ConfigError('EARMARK_API_KEYS', `${at}: tenant must match [A-Za-z0-9_-]{1,64}`);
    if (!Array.isArray(e.scopes) || e.scopes.some((s) => !SCOPES.includes(s)))
      throw new ConfigError('EARMARK_API_KEYS', `${at}: scopes must be a list of ${SCOPES.join(', ')}`);
    return { key: e.key, tenant: e.tenant, scopes: [...e.scopes] };
  });
}

function secrets(env: Env): Record<string, string> {
  if (!env.EARMARK_WEBHOOK_SECRETS) return {};
  const value = json(env, 'EARMARK_WEBHOOK_SECRETS');
  if (
    !value ||
    typeof value !== 'object' ||
    Array.isArray(value) ||
    Object.values(value).some((s) => typeof s !== 'string' || s.length < 16)
  ) {
    throw new ConfigError(
      'EARMARK_WEBHOOK_SECRETS',
      'expected a JSON object {tenant: secret} with secrets of at least 16 characters',
    );
  }
  return value as Record<string, string>;
}

/** Exported alone: the sandboxed fetch reads it from its inherited environment. */
export function fetchDeadlineMs(env: Env = process.env): number {
  return int(env, 'EARMARK_FETCH_DEADLINE_MS', 10 * 60_000, 100);
}

/** Exported alone: the sandboxed analysis child reads these from its inherited environment. */
export function childRssLimitMb(env: Env = process.env): number {
  return int(env, 'EARMARK_CHILD_RSS_LIMIT_MB', 512, 64);
}
export function maxDecodedSeconds(env: Env = process.env): number {
  return int(env, 'EARMARK_MAX_DECODED_SECONDS', 86_400, 1);
}

function bool(env: Env, name: string): boolean {
  const raw = (env[name] ?? '').trim().toLowerCase();
  if (raw === '' || raw === 'false' || raw === '0') return false;
  if (raw === 'true' || raw === '1') return true;
  throw new ConfigError(name, 'must be true or false');
}

/** Bucket names as S3 allows them (lower case, digits, dots, hyphens; 3-63 characters). */
const BUCKET = /^[a-z0-9][a-z0-9.-]{1,61}[a-z0-9]$/;
const PREFIX = /^[A-Za-z0-9!_.*'()/-]*$/;

function sourceBuckets(env: Env): string[] {
  const names = (env.EARMARK_S3_SOURCE_BUCKETS ?? '')
    .split(',')
    .map((s) => s.trim())
    .filter(Boolean);
  if (names.some((name) => !BUCKET.test(name)))
    throw new ConfigError('EARMARK_S3_SOURCE_BUCKETS', 'must be a comma-separated list of S3 bucket names');
  return names;
}

function storageLocation(env: Env): StorageLocation {
  const dirFromEnv = env.EARMARK_STORAGE_DIR ? resolve(env.EARMARK_STORAGE_DIR) : null;
  // Checked whatever the backend, so a typo shows before a switch to S3.
  const forcePathStyle = bool(env, 'EARMARK_S3_FORCE_PATH_STYLE');
  const buckets = sourceBuckets(env);
  const raw = env.EARMARK_STORAGE_URL;
  if (!raw) return { kind: 'file', dir: dirFromEnv ?? join(tmpdir(), 'earmark-storage') };
  const name = 'EARMARK_STORAGE_URL';
  let url: URL;
  try {
    url = new URL(raw);
  } catch {
    throw new ConfigError(name, 'must be file:///path or s3://bucket/prefix');
  }
  if (url.protocol === 'file:') {
    if (url.search || url.hash) throw new ConfigError(name, 'a file URL takes no query or fragment');
    const dir = resolve(fileURLToPath(url));
    if (dirFromEnv && dirFromEnv !== dir) throw new ConfigError(name, 'names another folder than EARMARK_STORAGE_DIR');
    return { kind: 'file', dir };
  }
  if (url.protocol !== 's3:') throw new ConfigError(name, 'must be file:///path or s3://bucket/prefix');
  if (!BUCKET.test(url.hostname) || url.username || url.password || url.port)
    throw new ConfigError(name, 'the bucket must be a valid S3 bucket name, with no user or port');
  const prefix = decodeURIComponent(url.pathname).replace(/^\/+|\/+$/g, '');
  if (!PREFIX.test(prefix) || prefix.includes('//') || url.search || url.hash)
    throw new ConfigError(name, "the prefix may hold only letters, digits and !_.*'()/-");
  const endpoint = env.AWS_ENDPOINT_URL_S3 || env.AWS_ENDPOINT_URL || null;
  if (endpoint !== null && !/^https?:\/\//.test(endpoint))
    throw new ConfigError(
      env.AWS_ENDPOINT_URL_S3 ? 'AWS_ENDPOINT_URL_S3' : 'AWS_ENDPOINT_URL',
      'must be an http(s) URL',
    );
  return {
    kind: 's3',
    bucket: url.hostname,
    prefix,
    endpoint,
    region: env.AWS_REGION || env.AWS_DEFAULT_REGION || 'us-east-1',
    forcePathStyle,
    sourceBuckets: buckets,
  };
}

export function loadConfig(env: Env = process.env): Config {
  const redisUrl = env.REDIS_URL || 'redis://127.0.0.1:6379';
  if (!/^rediss?:\/\//.test(redisUrl)) throw new ConfigError('REDIS_URL', 'must start with redis:// or rediss://');
  const prefix = env.EARMARK_QUEUE_PREFIX || 'earmark';
  if (!/^[A-Za-z0-9_-]{1,40}$/.test(prefix))
    throw new ConfigError('EARMARK_QUEUE_PREFIX', 'must match [A-Za-z0-9_-]{1,40}');
  const defaultSecret = env.EARMARK_WEBHOOK_SECRET || null;
  if (defaultSecret !== null && defaultSecret.length < 16)
    throw new ConfigError('EARMARK_WEBHOOK_SECRET', 'must be at least 16 characters');
  const logLevel = env.EARMARK_LOG_LEVEL || 'info';
  if (!['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent'].includes(logLevel))
    throw new ConfigError('EARMARK_LOG_LEVEL', 'must be one of fatal, error, warn, info, debug, trace, silent');
  const uploadLimitBytes = int(env, 'EARMARK_UPLOAD_LIMIT_BYTES', 2 * 1024 ** 3, 1);
  const storage = storageLocation(env);
  return {
    port: int(env, 'PORT', 8080, 0, 65535),
    host: env.HOST || '0.0.0.0',
    redisUrl,
    redisUrlExplicit: Boolean(env.REDIS_URL),
    queuePrefix: prefix,
    apiKeys: apiKeys(env),
    storage,
    storageDir:
      storage.kind === 'file' ? storage.dir : resolve(env.EARMARK_STORAGE_DIR || join(tmpdir(), 'earmark-local')),
    uploadLimitBytes,
    fetchLimitBytes: int(env, 'EARMARK_FETCH_LIMIT_BYTES', uploadLimitBytes, 1),
    fetchTimeoutMs: int(env, 'EARMARK_FETCH_TIMEOUT_MS', 60_000, 100),
    fetchDeadlineMs: fetchDeadlineMs(env),
    requestTimeoutMs: int(env, 'EARMARK_REQUEST_TIMEOUT_MS', 4 * 3600_000, 1_000),
    bodyTimeoutMs: int(env, 'EARMARK_BODY_TIMEOUT_MS', 60_000, 200),
    urlAllowlist: (env.EARMARK_URL_ALLOWLIST ?? '')
      .split(',')
      .map((s) => s.trim())
      .filter(Boolean),
    workerConcurrency: int(env, 'EARMARK_WORKER_CONCURRENCY', availableParallelism(), 1, 64),
    analysisThreads: int(env, 'EARMARK_ANALYSIS_THREADS', availableParallelism(), 1, 64),
    retentionHours: int(env, 'EARMARK_RETENTION_HOURS', 24, 1, 24 * 365),
    jobAttempts: int(env, 'EARMARK_JOB_ATTEMPTS', 3, 1, 20),
    jobBackoffMs: int(env, 'EARMARK_JOB_BACKOFF_MS', 5_000, 10),
    webhookSecrets: secrets(env),
    webhookDefaultSecret: defaultSecret,
    webhookAttempts: int(env, 'EARMARK_WEBHOOK_ATTEMPTS', 6, 1, 30),
    webhookBackoffMs: int(env, 'EARMARK_WEBHOOK_BACKOFF_MS', 10_000, 10),
    webhookTimeoutMs: int(env, 'EARMARK_WEBHOOK_TIMEOUT_MS', 10_000, 100),
    shutdownTimeoutMs: int(env, 'EARMARK_SHUTDOWN_TIMEOUT_MS', 30_000, 0),
    lockDurationMs: int(env, 'EARMARK_LOCK_DURATION_MS', 30_000, 500),
    stalledIntervalMs: int(env, 'EARMARK_STALLED_INTERVAL_MS', 30_000, 200),
    rateLimitPerMinute: int(env, 'EARMARK_RATE_LIMIT_PER_MINUTE', 1200, 0),
    logLevel,
    childRssLimitMb: childRssLimitMb(env),
    maxDecodedSeconds: maxDecodedSeconds(env),
    packageWaitMs: int(env, 'EARMARK_PACKAGE_WAIT_MS', 6 * 3600_000, 100),
  };
}
