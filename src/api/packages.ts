// Delivery packages in the service: a set of the tenant's jobs (uploads, URLs or direct uploads,
// finished or not) submitted as one package, checked together by the worker's package Worker
// (src/worker/package-worker.ts), read back as one view.

import { createHash, randomBytes } from 'node:crypto';
import { DEFAULT_RESIDUAL_TOLERANCE_DB } from '../analysis/stem-residual.ts';
import { assertPackageShape } from '../engine/package-set.ts';
import { EarmarkError } from '../errors/index.ts';
import type { PackageReport } from '../packages/check-package.ts';
import { decodeFailure } from '../queue/contract.ts';
import {
  CHECK_PACKAGE_V1,
  newPackageId,
  type CheckPackageJobV1,
  type PackageMemberRef,
} from '../queue/package-contract.ts';
import { packageView, memberFileName, type PackageView } from '../queue/package-view.ts';
import type { PackageQueue } from '../queue/queues.ts';
import type { AppDeps } from './deps.ts';

export interface PackageInput {
  profile: string;
  stemProfile?: string;
  toleranceDb?: number;
  members: PackageMemberRef[];
  callbackUrl?: string;
  externalId?: string;
}

async function assertProfile(deps: AppDeps, tenant: string, id: string, field: string): Promise<void> {
  if (!(await deps.profiles.get(tenant, id)))
    throw new EarmarkError('unknown_profile', `no profile "${id}" for this tenant`, { field });
}

export async function submitPackage(
  deps: AppDeps,
  queue: PackageQueue,
  tenant: string,
  input: PackageInput,
  idempotencyKey: string | undefined,
): Promise<{ packageId: string; duplicate: boolean }> {
  const ids = input.members.map((m) => m.jobId);
  const repeated = ids.find((id, i) => ids.indexOf(id) !== i);
  if (repeated)
    throw new EarmarkError('invalid_argument', `job ${repeated} is listed twice: a file is a member once`, {
      field: 'members',
      jobId: repeated,
    });
  assertPackageShape(input.members);
  await assertProfile(deps, tenant, input.profile, 'profile');
  if (input.stemProfile !== undefined) await assertProfile(deps, tenant, input.stemProfile, 'stemProfile');
  if (input.callbackUrl) await deps.policy.check(input.callbackUrl, 'callbackUrl');
  // Another tenant's job answers exactly like a missing one.
  const loaded = await deps.jobs.read(tenant, ids);
  input.members.forEach(({ jobId, role }, i) => {
    const member = loaded.get(jobId);
    if (!member) throw new EarmarkError('not_found', `no job ${jobId}`, { field: `members.${i}.jobId`, jobId });
    // Each member's verdict is its own job's: it must have been checked against the package's profile.
    const expected = role === 'stem' ? (input.stemProfile ?? input.profile) : input.profile;
    const checked = member.job.data.profileId;
    if (checked !== expected)
      throw new EarmarkError(
        'invalid_argument',
        `the ${role} ${memberFileName(member.job)} (job ${jobId}) was checked against profile "${checked}", not "${expected}": re-run it against "${expected}" (POST /v1/jobs/${jobId}/reruns) and list the new job`,
        { field: `members.${i}.jobId`, jobId, profile: checked, expected },
      );
  });
  const request = {
    profile: input.profile,
    stemProfile: input.stemProfile ?? null,
    toleranceDb: input.toleranceDb ?? DEFAULT_RESIDUAL_TOLERANCE_DB,
    members: input.members.map(({ jobId, role }) => ({ jobId, role })),
    callbackUrl: input.callbackUrl ?? null,
    externalId: input.externalId ?? null,
  };
  const packageId = newPackageId(randomBytes(12).toString('hex'));
  if (idempotencyKey) {
    // Claims share the job submissions' keys; the 'package' tag keeps the two fingerprints apart.
    const fingerprint = createHash('sha256')
      .update(JSON.stringify(['package', request]))
      .digest('hex');
    const existing = await deps.store.idempotency.claim(tenant, idempotencyKey, packageId, fingerprint);
    if (existing) {
      if (existing.fingerprint !== fingerprint)
        throw new EarmarkError('idempotency_conflict', 'this Idempotency-Key was used for a different request', {
          field: 'Idempotency-Key',
        });
      return { packageId: existing.jobId, duplicate: true };
    }
  }
  const record: CheckPackageJobV1 = { packageId, tenant, ...request, submittedAt: new Date().toISOString() };
  try {
    await deps.store.packages.put(record);
    await queue.add(CHECK_PACKAGE_V1, record, { jobId: record.packageId });
  } catch (error) {
    if (idempotencyKey) await deps.store.idempotency.release(tenant, idempotencyKey).catch(() => undefined);
    throw error;
  }
  return { packageId, duplicate: false };
}

async function storedReport(deps: AppDeps, packageId: string): Promise<string> {
  const json = (await deps.store.reports.get(packageId)) ?? (await deps.storage.readReport(packageId));
  if (!json) throw new EarmarkError('not_found', `the report of package ${packageId} is past its retention period`);
  return json;
}

/** The package's view for its tenant. */
export async function readPackage(
  deps: AppDeps,
  queue: PackageQueue,
  tenant: string,
  packageId: string,
): Promise<PackageView> {
  const record = await deps.store.packages.get(tenant, packageId);
  if (!record) throw new EarmarkError('not_found', `no package ${packageId}`);
  const job = await queue.getJob(packageId);
  if (!job) throw new EarmarkError('not_found', `package ${packageId} is past its retention period`);
  const state = await job.getState();
  const members = await deps.jobs.read(
    tenant,
    record.members.map((m) => m.jobId),
  );
  const completed = state === 'completed';
  const report = completed ? (JSON.parse(await storedReport(deps, packageId)) as PackageReport) : null;
  return packageView(record, state, {
    result: completed ? job.returnvalue : null,
    report,
    finishedAtMs: job.finishedOn ?? null,
    error: state === 'failed' ? decodeFailure(job.failedReason) : null,
    members,
    deliveries: record.callbackUrl ? await deps.store.deliveries.list(packageId) : [],
  });
}

/** The stored package report (JSON text) of a completed package. */
export async function packageReportText(
  deps: AppDeps,
  queue: PackageQueue,
  tenant: string,
  packageId: string,
): Promise<string> {
  const record = await deps.store.packages.get(tenant, packageId);
  if (!record) throw new EarmarkError('not_found', `no package ${packageId}`);
  const state = await queue.getJobState(packageId);
  if (state !== 'completed')
    throw new EarmarkError(
      'report_not_ready',
      `package ${packageId} is ${state === 'active' ? 'being checked' : state}`,
    );
  return storedReport(deps, packageId);
}
