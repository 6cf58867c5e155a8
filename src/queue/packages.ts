// Package records: what the tenant asked for (members, profiles, tolerance), kept for the
// retention period like its jobs. The package's state and outcome are its BullMQ job's; this
// record is what GET /v1/packages/:id answers from for the right tenant only.

import type { Redis } from 'ioredis';
import type { CheckPackageJobV1 } from './package-contract.ts';
import { serviceKey } from './service-keys.ts';

export type PackageRecord = CheckPackageJobV1;

export class PackageStore {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  private key(packageId: string): string {
    return serviceKey(this.prefix, 'package', packageId);
  }

  async put(record: PackageRecord): Promise<void> {
    await this.redis.set(this.key(record.packageId), JSON.stringify(record), 'EX', this.retentionSeconds);
  }

  /** The tenant's package, or null (another tenant's answers as a missing one). */
  async get(tenant: string, packageId: string): Promise<PackageRecord | null> {
    const json = await this.redis.get(this.key(packageId));
    if (!json) return null;
    const record = parsePackageRecord(json);
    return record.tenant === tenant ? record : null;
  }
}

const ROLES: readonly string[] = ['mix', 'stem', 'version'];
const isRole = (v: unknown): v is PackageRecord['members'][number]['role'] =>
  typeof v === 'string' && ROLES.includes(v);
const nullableString = (v: unknown): v is string | null => v === null || typeof v === 'string';

/** A stored record read back field by field: a damaged one is an error, never a wrong package. */
export function parsePackageRecord(json: string): PackageRecord {
  const v: unknown = JSON.parse(json);
  const fail = (): never => {
    throw new Error('a stored package record does not have the shape this version writes');
  };
  if (typeof v !== 'object' || v === null) return fail();
  const r: Record<string, unknown> = { ...v };
  const members = Array.isArray(r.members)
    ? r.members.map((m: unknown) => {
        if (typeof m !== 'object' || m === null || !('jobId' in m) || !('role' in m)) return fail();
        if (typeof m.jobId !== 'string' || !isRole(m.role)) return fail();
        return { jobId: m.jobId, role: m.role };
      })
    : fail();
  const { packageId, tenant, profile, stemProfile, toleranceDb, callbackUrl, externalId, submittedAt } = r;
  if (
    typeof packageId !== 'string' ||
    typeof tenant !== 'string' ||
    typeof profile !== 'string' ||
    !nullableString(stemProfile) ||
    typeof toleranceDb !== 'number' ||
    !nullableString(callbackUrl) ||
    !nullableString(externalId) ||
    typeof submittedAt !== 'string'
  )
    return fail();
  return { packageId, tenant, profile, stemProfile, toleranceDb, members, callbackUrl, externalId, submittedAt };
}
