// Turning a validated submission into a queued job: profile resolution, URL policy,
// idempotency and the BullMQ add. A failure after the upload was stored removes it again.

import { createHash, randomBytes } from 'node:crypto';
import { EarmarkError } from '../errors/index.ts';
import { ANALYZE_JOB_V1, type AnalyzeJobV1, type JobSource } from '../queue/contract.ts';
import type { AppDeps } from './deps.ts';

export interface SubmitInput {
  profile: string;
  callbackUrl?: string;
  externalId?: string;
  metadata?: Record<string, string>;
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
  const entry = await deps.profiles.get(tenant, input.profile);
  if (!entry)
    throw new EarmarkError('unknown_profile', `no profile "${input.profile}" for this tenant`, { field: 'profile' });
  if (input.callbackUrl) await deps.policy.check(input.callbackUrl, 'callbackUrl');
  if (source.kind === 'url') {
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
        source.kind === 'url' ? source.url : source.sha256,
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
  const data: AnalyzeJobV1 = {
    tenant,
    source,
    profileId: entry.profile.id,
    profileVersion: entry.profile.version,
    profile: entry.profile,
    callbackUrl: input.callbackUrl ?? null,
    externalId: input.externalId ?? null,
    metadata: input.metadata ?? null,
    submittedAt: new Date().toISOString(),
  };
  try {
    // Fair share between tenants (src/queue/fair-share.ts): a burst from one tenant queues behind
    // another tenant's next job instead of in front of it.
    const priority = await deps.store.fairShare.nextPriority(tenant);
    await deps.queue.add(ANALYZE_JOB_V1, data, { jobId: id, priority });
    await deps.store.index.add(tenant, id, Date.now());
  } catch (error) {
    if (idempotencyKey) await deps.store.idempotency.release(tenant, idempotencyKey).catch(() => undefined);
    throw error;
  }
  return { id, duplicate: false };
}
