// What the sandboxed child needs from the worker's configuration, passed in its environment
// (the child cannot see a Config object, and tests configure workers without process.env).

export interface ChildSettings { storageDir: string; urlAllowlist: string[]; fetchLimitBytes: number; fetchTimeoutMs: number }

export const CHILD_SETTINGS_ENV = 'EARMARK_CHILD_SETTINGS';

export function readChildSettings(): ChildSettings {
  const raw = process.env[CHILD_SETTINGS_ENV];
  if (!raw) throw new Error(`${CHILD_SETTINGS_ENV} is missing: the processor runs only as the worker's sandboxed child`);
  return JSON.parse(raw) as ChildSettings;
}
