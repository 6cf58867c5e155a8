// What the sandboxed child needs from the worker's configuration, passed in its environment
// (the child cannot see a Config object, and tests configure workers without process.env).
import { childRssLimitMb, fetchDeadlineMs, maxDecodedSeconds } from '../config/index.ts';

export interface ChildSettings {
  storageDir: string; urlAllowlist: string[]; fetchLimitBytes: number; fetchTimeoutMs: number;
  /** Optional here: when the worker does not pass them, the child reads its inherited environment. */
  childRssLimitMb?: number;
  maxDecodedSeconds?: number;
  fetchDeadlineMs?: number;
}

export const CHILD_SETTINGS_ENV = 'EARMARK_CHILD_SETTINGS';

export function readChildSettings(): Required<ChildSettings> {
  const raw = process.env[CHILD_SETTINGS_ENV];
  if (!raw) throw new Error(`${CHILD_SETTINGS_ENV} is missing: the processor runs only as the worker's sandboxed child`);
  const settings = JSON.parse(raw) as ChildSettings;
  return {
    ...settings,
    childRssLimitMb: settings.childRssLimitMb ?? childRssLimitMb(),
    maxDecodedSeconds: settings.maxDecodedSeconds ?? maxDecodedSeconds(),
    fetchDeadlineMs: settings.fetchDeadlineMs ?? fetchDeadlineMs(),
  };
}
