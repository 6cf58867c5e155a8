// Worker-thread entry for one package's set check (package-set-runner.ts starts it): decodes the
// members' local copies in lockstep (src/engine/package-set.ts), posts the result or the typed
// error, and ends.
import { parentPort, workerData } from 'node:worker_threads';
import { checkPackageSet, type PackageRole, type PackageSetResult } from '../engine/package-set.ts';
import { toWireError, type WireError } from '../errors/index.ts';
import { decodeOptionsForProfile, type Profile } from '../profiles/index.ts';

export interface PackageSetThreadData {
  members: { path: string; name: string; role: PackageRole; profile: Profile }[];
  toleranceDb: number;
  maxDecodedSeconds: number;
}

export type FromPackageSetThread = { type: 'done'; set: PackageSetResult } | { type: 'error'; error: WireError };

function isThreadData(value: unknown): value is PackageSetThreadData {
  if (!value || typeof value !== 'object') return false;
  const v: Partial<Record<keyof PackageSetThreadData, unknown>> = value;
  return Array.isArray(v.members) && Number.isFinite(v.toleranceDb) && Number.isFinite(v.maxDecodedSeconds);
}

try {
  if (!isThreadData(workerData)) throw new Error('the package thread was started without its members');
  const { members, toleranceDb, maxDecodedSeconds } = workerData;
  const set = await checkPackageSet(
    // Each member decodes as in its own job (its profile's declared layout).
    members.map((m) => ({ path: m.path, name: m.name, role: m.role, decode: decodeOptionsForProfile(m.profile) })),
    { toleranceDb, decode: { maxDecodedSeconds } },
  );
  const message: FromPackageSetThread = { type: 'done', set };
  parentPort!.postMessage(message);
} catch (error) {
  const message: FromPackageSetThread = { type: 'error', error: toWireError(error) };
  parentPort!.postMessage(message);
}
