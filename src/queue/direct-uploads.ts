// Direct uploads handed out (POST /v1/uploads) and not yet submitted: the storage key, file name
// and size the presigned URL was made for, per tenant, until the retention period ends.

import type { Redis } from 'ioredis';
import { serviceKey } from './service-keys.ts';

export interface DirectUpload {
  storageKey: string;
  fileName: string;
  sizeBytes: number;
}

export class DirectUploads {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  private key(tenant: string, uploadId: string): string {
    return serviceKey(this.prefix, 'upload', tenant, uploadId);
  }

  async put(tenant: string, uploadId: string, upload: DirectUpload): Promise<void> {
    await this.redis.set(this.key(tenant, uploadId), JSON.stringify(upload), 'EX', this.retentionSeconds);
  }

  /** Another tenant's upload id reads as unknown. */
  async get(tenant: string, uploadId: string): Promise<DirectUpload | null> {
    const raw = await this.redis.get(this.key(tenant, uploadId));
    if (!raw) return null;
    const value: unknown = JSON.parse(raw);
    if (!value || typeof value !== 'object') return null;
    const { storageKey, fileName, sizeBytes } = value as Record<string, unknown>;
    if (typeof storageKey !== 'string' || typeof fileName !== 'string' || typeof sizeBytes !== 'number') return null;
    return { storageKey, fileName, sizeBytes };
  }

  async remove(tenant: string, uploadId: string): Promise<void> {
    await this.redis.del(this.key(tenant, uploadId));
  }
}
