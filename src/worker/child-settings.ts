// What the sandboxed child needs from the worker's configuration, passed in its environment
// (the child cannot see a Config object, and tests configure workers without process.env).
// The child checks them with the worker's own environment schema (config/index.ts), so one set of
// bounds holds on both sides of the fork.
import { isAbsolute } from 'node:path';
import { ConfigError, loadConfig, type Config, type StorageLocation } from '../config/index.ts';

export interface ChildSettings {
  storageDir: string;
  /** The S3 backend's settings; absent for the file backend (storageDir). Credentials come from
   * the SDK's chain in the inherited environment. */
  s3?: { url: string; endpoint: string | null; region: string; forcePathStyle: boolean; sourceBuckets: string[] };
  urlAllowlist: string[];
  fetchLimitBytes: number;
  fetchTimeoutMs: number;
  /** Optional here: when the worker does not pass them, the child reads its inherited environment. */
  childRssLimitMb?: number;
  maxDecodedSeconds?: number;
  fetchDeadlineMs?: number;
  uploadLimitBytes?: number;
}

/** What the child reads: the settings with the defaults filled in and the storage parsed. */
export type ChildConfig = Required<Omit<ChildSettings, 's3'>> & { storage: StorageLocation };

export const CHILD_SETTINGS_ENV = 'EARMARK_CHILD_SETTINGS';

type Env = Record<string, string | undefined>;

/** Each numeric setting and the variable the environment schema knows it by. */
const NUMBER_VARIABLES = {
  fetchLimitBytes: 'EARMARK_FETCH_LIMIT_BYTES',
  fetchTimeoutMs: 'EARMARK_FETCH_TIMEOUT_MS',
  childRssLimitMb: 'EARMARK_CHILD_RSS_LIMIT_MB',
  maxDecodedSeconds: 'EARMARK_MAX_DECODED_SECONDS',
  fetchDeadlineMs: 'EARMARK_FETCH_DEADLINE_MS',
  uploadLimitBytes: 'EARMARK_UPLOAD_LIMIT_BYTES',
} as const satisfies Record<Exclude<keyof ChildSettings, 'storageDir' | 'urlAllowlist' | 's3'>, string>;

const REQUIRED = new Set<string>(['fetchLimitBytes', 'fetchTimeoutMs']);

const invalid = (field: string, message: string) => new ConfigError(CHILD_SETTINGS_ENV, `${field} ${message}`);

/** The settings as environment variables; absent optional ones come from the inherited environment. */
function settingsAsEnv(value: unknown, inherited: Env): Env {
  if (!value || typeof value !== 'object' || Array.isArray(value)) throw invalid('settings', 'must be a JSON object');
  const record: Record<string, unknown> = { ...value };
  const known = new Set<string>(['storageDir', 'urlAllowlist', 's3', ...Object.keys(NUMBER_VARIABLES)]);
  const unknown = Object.keys(record).find((key) => !known.has(key));
  if (unknown !== undefined) throw invalid(unknown, 'is not a known setting');
  const { storageDir, urlAllowlist } = record;
  if (typeof storageDir !== 'string' || !isAbsolute(storageDir))
    throw invalid('storageDir', 'must be an absolute path');
  // The schema reads the allowlist comma-separated, so an entry may not hold a comma.
  if (
    !Array.isArray(urlAllowlist) ||
    urlAllowlist.some((e) => typeof e !== 'string' || e.trim() === '' || e !== e.trim() || e.includes(','))
  ) {
    throw invalid('urlAllowlist', 'must be a list of host names or CIDR ranges');
  }
  const env: Env = {
    EARMARK_STORAGE_DIR: storageDir,
    EARMARK_URL_ALLOWLIST: urlAllowlist.join(','),
    ...s3Env(record.s3),
  };
  for (const [field, variable] of Object.entries(NUMBER_VARIABLES)) {
    const setting = record[field];
    if (setting === undefined && !REQUIRED.has(field)) env[variable] = inherited[variable];
    else if (typeof setting !== 'number' || !Number.isSafeInteger(setting))
      throw invalid(field, 'must be a whole number');
    else env[variable] = String(setting);
  }
  return env;
}

function s3Env(s3: unknown): Env {
  if (s3 === undefined) return {};
  if (!s3 || typeof s3 !== 'object') throw invalid('s3', 'must be an object');
  const { url, endpoint, region, forcePathStyle, sourceBuckets } = s3 as Record<string, unknown>;
  if (typeof url !== 'string' || typeof region !== 'string' || typeof forcePathStyle !== 'boolean')
    throw invalid('s3', 'must hold url, region and forcePathStyle');
  if (!Array.isArray(sourceBuckets) || sourceBuckets.some((name) => typeof name !== 'string' || name.includes(',')))
    throw invalid('s3', 'sourceBuckets must be a list of bucket names');
  if (endpoint !== null && typeof endpoint !== 'string') throw invalid('s3', 'endpoint must be a string or null');
  return {
    EARMARK_STORAGE_URL: url,
    AWS_ENDPOINT_URL_S3: endpoint ?? undefined,
    AWS_REGION: region,
    EARMARK_S3_FORCE_PATH_STYLE: String(forcePathStyle),
    EARMARK_S3_SOURCE_BUCKETS: sourceBuckets.join(','),
  };
}

/** The settings the worker passes its child for this configuration. */
export function childSettingsOf(config: Config): ChildSettings {
  const { storage } = config;
  return {
    storageDir: config.storageDir,
    ...(storage.kind === 's3'
      ? {
          s3: {
            url: `s3://${storage.bucket}/${storage.prefix}`,
            endpoint: storage.endpoint,
            region: storage.region,
            forcePathStyle: storage.forcePathStyle,
            sourceBuckets: storage.sourceBuckets,
          },
        }
      : {}),
    urlAllowlist: config.urlAllowlist,
    fetchLimitBytes: config.fetchLimitBytes,
    fetchTimeoutMs: config.fetchTimeoutMs,
    fetchDeadlineMs: config.fetchDeadlineMs,
    childRssLimitMb: config.childRssLimitMb,
    maxDecodedSeconds: config.maxDecodedSeconds,
    uploadLimitBytes: config.uploadLimitBytes,
  };
}

/** The schema's verdict, naming the setting rather than the variable it stood in for. */
function checked(env: Env): Config {
  try {
    return loadConfig(env);
  } catch (error) {
    const field = Object.entries(NUMBER_VARIABLES).find(
      ([, variable]) => error instanceof ConfigError && error.variable === variable,
    )?.[0];
    if (field === undefined || !(error instanceof ConfigError)) throw error;
    throw invalid(field, error.message.slice(error.variable.length + 2));
  }
}

/** The child's settings, checked against the environment schema; a bad value throws ConfigError. */
export function parseChildSettings(raw: string | undefined, inherited: Env = process.env): ChildConfig {
  if (!raw)
    throw new ConfigError(CHILD_SETTINGS_ENV, "is missing: the processor runs only as the worker's sandboxed child");
  let value: unknown;
  try {
    value = JSON.parse(raw);
  } catch {
    throw new ConfigError(CHILD_SETTINGS_ENV, 'is not valid JSON');
  }
  const config = checked(settingsAsEnv(value, inherited));
  return {
    storageDir: config.storageDir,
    storage: config.storage,
    urlAllowlist: config.urlAllowlist,
    fetchLimitBytes: config.fetchLimitBytes,
    fetchTimeoutMs: config.fetchTimeoutMs,
    childRssLimitMb: config.childRssLimitMb,
    maxDecodedSeconds: config.maxDecodedSeconds,
    fetchDeadlineMs: config.fetchDeadlineMs,
    uploadLimitBytes: config.uploadLimitBytes,
  };
}

export function readChildSettings(): ChildConfig {
  return parseChildSettings(process.env[CHILD_SETTINGS_ENV]);
}
