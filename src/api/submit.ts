// Turning a validated submission into a queued job: profile resolution, URL policy,
// idempotency and the BullMQ add. A failure after the upload was stored removes it again.

import { createHash, randomBytes } from 'node:crypto';
import { EarmarkError } from '../errors/index.ts';
import { ANALYZE_JOB_V1, type AnalyzeJobV1, type JobSource } from '../queue/contract.ts';
import type { FastifyReply, FastifyRequest } from 'fastify';
import type { AppDeps } from './deps.ts';

export interface SubmitInput {
  profile: string;
  callbackUrl?: string;
  externalId?: string;
  metadata?: Record<string, string>;
  /** A stored version of the profile ("<n>.0.0"); the current one when absent. */
  profileVersion?: string;
  /** Set by a re-run (src/api/rerun.ts): the job whose stored audio this one checks again. */
  rerunOf?: string;
}

export interface Submitted {
  id: string;
  duplicate: boolean;
}

/** The worker names the file after the URL's decoded path: a broken percent escape ("%zz",
 * "%E0%A4") would fail there on every attempt, so it is refused here instead. */
function assertDecodablePath(url: string): void {
  try {
    decodeURIComponent(new URL(url).pathname);
  } catch {
    throw new EarmarkError('validation_failed', 'sourceUrl has a malformed percent escape in its path', {
      field: 'sourceUrl',
    });
  }
}

export const newJobId = () => `j_${randomBytes(12).toString('hex')}`;

export async function submitJob(
  deps: AppDeps,
  tenant: string,
  input: SubmitInput,
  source: JobSource & { sha256?: string },
  idempotencyKey: string | undefined,
): Promise<Submitted> {
  const entry =
    input.profileVersion === undefined
      ? await deps.profiles.get(tenant, input.profile)
      : await deps.profiles.version(tenant, input.profile, input.profileVersion);
  if (!entry && input.profileVersion !== undefined && (await deps.profiles.get(tenant, input.profile)))
    throw new EarmarkError('unknown_profile', `profile "${input.profile}" has no version ${input.profileVersion}`, {
      field: 'profileVersion',
    });
  if (!entry)
    throw new EarmarkError('unknown_profile', `no profile "${input.profile}" for this tenant`, { field: 'profile' });
  if (input.callbackUrl) await deps.policy.check(input.callbackUrl, 'callbackUrl');
  // An s3:// source is read from an allowed bucket of the object store, never over the network policy.
  if (source.kind === 'url' && source.url.startsWith('s3://')) deps.storage.checkSource(source.url);
  else if (source.kind === 'url') {
    await deps.policy.check(source.url, 'sourceUrl');
    assertDecodablePath(source.url);
  }

  const id = newJobId();
  const fingerprint = createHash('sha256')
    .update(
      JSON.stringify([
        input.profile,
        input.callbackUrl ?? null,
        input.externalId ?? null,
        input.metadata ?? null,
        source.kind === 'url' ? source.url : (source.sha256 ?? source.storageKey),
        // Only re-runs add these, so a plain submission's fingerprint is what it always was.
        ...(input.rerunOf === undefined ? [] : [input.rerunOf, input.profileVersion ?? null]),
      ]),
    )
    .digest('hex');
  if (idempotencyKey) {
    const existing = await deps.store.idempotency.claim(tenant, idempotencyKey, id, fingerprint);
    if (existing) {
      if (existing.fingerprint !== fingerprint)
        throw new EarmarkError('idempotency_conflict', 'this Idempotency-Key was used for a different request', {
          field: 'Idempotency-Key',
        });
      return { id: existing.jobId, duplicate: true };
    }
  }
  // One submit time for the job, its createdAt and its index score, so a listing's date range
  // (bounded by the score) agrees with the createdAt it shows.
  const submittedAtMs = Date.now();
  const data: AnalyzeJobV1 = {
    tenant,
    source,
    profileId: entry.profile.id,
    profileVersion: entry.profile.version,
    profile: entry.profile,
    callbackUrl: input.callbackUrl ?? null,
    externalId: input.externalId ?? null,
    metadata: input.metadata ?? null,
    submittedAt: new Date(submittedAtMs).toISOString(),
    ...(input.rerunOf === undefined ? {} : { rerunOf: input.rerunOf }),
  };
  try {
    // Fair share between tenants (src/queue/fair-share.ts): a burst from one tenant queues behind
    // another tenant's next job instead of in front of it.
    const priority = await deps.store.fairShare.nextPriority(tenant);
    await deps.queue.add(ANALYZE_JOB_V1, data, { jobId: id, priority, timestamp: submittedAtMs });
    await deps.store.index.add(tenant, id, submittedAtMs);
  } catch (error) {
    if (idempotencyKey) await deps.store.idempotency.release(tenant, idempotencyKey).catch(() => undefined);
    throw error;
  }
  return { id, duplicate: false };
}

/** A job on a direct upload's file, once it is in storage. The upload id stays valid until the
 * retention period ends, so the same file may be checked against several profiles; the worker
 * hashes the bytes that landed, as it copies them. */
export async function submitDirectUpload(
  deps: AppDeps,
  tenant: string,
  uploadId: string,
  input: SubmitInput,
  idempotencyKey: string | undefined,
): Promise<Submitted> {
  const upload = await deps.store.uploads.get(tenant, uploadId);
  if (!upload) throw new EarmarkError('not_found', `no upload ${uploadId} for this tenant`, { field: 'uploadId' });
  const sizeBytes = await deps.storage.sizeOf(upload.storageKey);
  if (sizeBytes === null)
    throw new EarmarkError('upload_incomplete', 'the file has not been PUT to the upload URL yet', {
      field: 'uploadId',
    });
  // The signed Content-Length makes S3 refuse another size; this holds on stores that do not check.
  if (sizeBytes !== upload.sizeBytes)
    throw new EarmarkError(
      'validation_failed',
      `the stored file is ${sizeBytes} bytes, not the ${upload.sizeBytes} declared for this upload`,
      { field: 'uploadId' },
    );
  const { storageKey, fileName } = upload;
  return submitJob(deps, tenant, input, { kind: 'upload', storageKey, fileName, sizeBytes }, idempotencyKey);
}

/** The client's Idempotency-Key, cut to the length the stores key on. */
export function idempotencyKeyOf(request: FastifyRequest): string | undefined {
  const header = request.headers['idempotency-key'];
  return typeof header === 'string' ? header.slice(0, 200) : undefined;
}

/** 202 for a new job, 200 with its state for a repeated submission; Location names the job. */
export async function replySubmitted(deps: AppDeps, tenant: string, reply: FastifyReply, result: Submitted) {
  if (!result.duplicate) deps.metrics.jobSubmitted(tenant);
  const statusUrl = `/v1/jobs/${result.id}`;
  const state = result.duplicate ? ((await deps.jobs.stateOf(tenant, result.id)) ?? 'queued') : 'queued';
  return reply
    .code(result.duplicate ? 200 : 202)
    .header('location', statusUrl)
    .send({ id: result.id, state, statusUrl, duplicate: result.duplicate });
}
