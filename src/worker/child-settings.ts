// What the sandboxed child needs from the worker's configuration, passed in its environment
// (the child cannot see a Config object, and tests configure workers without process.env).
// The child checks them with the worker's own environment schema (config/index.ts), so one set of
// bounds holds on both sides of the fork.
import { isAbsolute } from 'node:path';
import { ConfigError, loadConfig, type Config } from '../config/index.ts';

export interface ChildSettings {
  storageDir: string;
  urlAllowlist: string[];
  fetchLimitBytes: number;
  fetchTimeoutMs: number;
  /** Optional here: when the worker does not pass them, the child reads its inherited environment. */
  childRssLimitMb?: number;
  maxDecodedSeconds?: number;
  fetchDeadlineMs?: number;
}

export const CHILD_SETTINGS_ENV = 'EARMARK_CHILD_SETTINGS';

type Env = Record<string, string | undefined>;

/** Each numeric setting and the variable the environment schema knows it by. */
const NUMBER_VARIABLES = {
  fetchLimitBytes: 'EARMARK_FETCH_LIMIT_BYTES',
  fetchTimeoutMs: 'EARMARK_FETCH_TIMEOUT_MS',
  childRssLimitMb: 'EARMARK_CHILD_RSS_LIMIT_MB',
  maxDecodedSeconds: 'EARMARK_MAX_DECODED_SECONDS',
  fetchDeadlineMs: 'EARMARK_FETCH_DEADLINE_MS',
} as const satisfies Record<Exclude<keyof ChildSettings, 'storageDir' | 'urlAllowlist'>, string>;

const REQUIRED = new Set<string>(['fetchLimitBytes', 'fetchTimeoutMs']);

const invalid = (field: string, message: string) => new ConfigError(CHILD_SETTINGS_ENV, `${field} ${message}`);

/** The settings as environment variables; absent optional ones come from the inherited environment. */
function settingsAsEnv(value: unknown, inherited: Env): Env {
  if (!value || typeof value !== 'object' || Array.isArray(value)) throw invalid('settings', 'must be a JSON object');
  const record: Record<string, unknown> = { ...value };
  const known = new Set<string>(['storageDir', 'urlAllowlist', ...Object.keys(NUMBER_VARIABLES)]);
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
  const env: Env = { EARMARK_STORAGE_DIR: storageDir, EARMARK_URL_ALLOWLIST: urlAllowlist.join(',') };
  for (const [field, variable] of Object.entries(NUMBER_VARIABLES)) {
    const setting = record[field];
    if (setting === undefined && !REQUIRED.has(field)) env[variable] = inherited[variable];
    else if (typeof setting !== 'number' || !Number.isSafeInteger(setting))
      throw invalid(field, 'must be a whole number');
    else env[variable] = String(setting);
  }
  return env;
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
export function parseChildSettings(raw: string | undefined, inherited: Env = process.env): Required<ChildSettings> {
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
    urlAllowlist: config.urlAllowlist,
    fetchLimitBytes: config.fetchLimitBytes,
    fetchTimeoutMs: config.fetchTimeoutMs,
    childRssLimitMb: config.childRssLimitMb,
    maxDecodedSeconds: config.maxDecodedSeconds,
    fetchDeadlineMs: config.fetchDeadlineMs,
  };
}

export function readChildSettings(): Required<ChildSettings> {
  return parseChildSettings(process.env[CHILD_SETTINGS_ENV]);
}
