// A re-run: a finished job's stored audio checked again, against another profile or another
// version of the same one, as a new job (no new upload). The audio is the original's until the
// retention sweep: an upload's file, or the fetched copy of a completed sourceUrl job. A sourceUrl
// job that failed, or an s3:// source (read in place, never copied), has none to re-run.

import { EarmarkError } from '../errors/index.ts';
import type { AnalysisJob } from '../queue/jobs-repository.ts';
import type { AppDeps } from './deps.ts';
import { submitJob, type Submitted } from './submit.ts';

export interface RerunInput {
  profile: string;
  profileVersion?: string;
  /** Absent: the original's callbackUrl; null: no callback. */
  callbackUrl?: string | null;
}

/** The stored audio of a finished job as a source for a new one, or null when it kept none. */
function storedAudio(job: AnalysisJob, completed: boolean): { storageKey: string; fileName: string } | null {
  const { source } = job.data;
  if (source.kind === 'upload') return { storageKey: source.storageKey, fileName: source.fileName };
  const kept = completed ? job.returnvalue?.sourceKey : '';
  if (!kept) return null;
  const last = new URL(source.url).pathname.split('/').pop() ?? '';
  let fileName = 'source';
  try {
    fileName = decodeURIComponent(last) || 'source';
  } catch {
    // The submit refused broken escapes; an old job's name falls back.
  }
  return { storageKey: kept, fileName };
}

export async function rerunJob(
  deps: AppDeps,
  tenant: string,
  originalId: string,
  input: RerunInput,
  idempotencyKey: string | undefined,
): Promise<Submitted> {
  const { job, state } = await deps.jobs.load(tenant, originalId);
  if (state !== 'completed' && state !== 'failed')
    throw new EarmarkError('job_not_finished', `job ${originalId} is ${state}: re-run it once it has finished`);
  const audio = storedAudio(job, state === 'completed');
  const sizeBytes = audio ? await deps.storage.sizeOf(audio.storageKey) : null;
  if (!audio || sizeBytes === null)
    throw new EarmarkError(
      'audio_expired',
      audio
        ? `the audio of job ${originalId} is past its retention period; submit the file again`
        : `job ${originalId} kept no copy of its audio (a failed or s3:// source); submit the file again`,
    );
  const original = job.data;
  const sha256 = original.source.kind === 'upload' ? original.source.sha256 : undefined;
  const callbackUrl = input.callbackUrl === undefined ? original.callbackUrl : input.callbackUrl;
  const submitted = await submitJob(
    deps,
    tenant,
    {
      profile: input.profile,
      ...(input.profileVersion === undefined ? {} : { profileVersion: input.profileVersion }),
      ...(callbackUrl ? { callbackUrl } : {}),
      ...(original.externalId ? { externalId: original.externalId } : {}),
      ...(original.metadata ? { metadata: original.metadata } : {}),
      rerunOf: originalId,
    },
    {
      kind: 'upload',
      storageKey: audio.storageKey,
      fileName: audio.fileName,
      sizeBytes,
      ...(sha256 ? { sha256 } : {}),
    },
    idempotencyKey,
  );
  if (!submitted.duplicate) await deps.store.reruns.add(originalId, submitted.id);
  return submitted;
}
