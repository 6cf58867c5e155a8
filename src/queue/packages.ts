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
    const record = JSON.parse(json) as PackageRecord;
    return record.tenant === tenant ? record : null;
  }
}
