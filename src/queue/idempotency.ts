// Idempotency keys per tenant: the first submission with a key claims it for its job id and
// request fingerprint; later ones get that claim back. Keys are stored hashed.

import { createHash } from 'node:crypto';
import type { Redis } from 'ioredis';
import { serviceKey } from './service-keys.ts';

export interface IdempotencyClaim {
  jobId: string;
  fingerprint: string;
}

export class IdempotencyKeys {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  private key(tenant: string, idempotencyKey: string): string {
    return serviceKey(this.prefix, 'idem', tenant, createHash('sha256').update(idempotencyKey).digest('hex'));
  }

  /** Claims an idempotency key for jobId; returns the existing claim when there is one. */
  async claim(
    tenant: string,
    idempotencyKey: string,
    jobId: string,
    fingerprint: string,
  ): Promise<IdempotencyClaim | null> {
    const key = this.key(tenant, idempotencyKey);
    const set = await this.redis.set(key, `${jobId} ${fingerprint}`, 'EX', this.retentionSeconds, 'NX');
    if (set === 'OK') return null;
    const existing = await this.redis.get(key);
    if (!existing) return this.claim(tenant, idempotencyKey, jobId, fingerprint);
    const [existingId, existingFingerprint] = existing.split(' ');
    return { jobId: existingId, fingerprint: existingFingerprint };
  }

  async release(tenant: string, idempotencyKey: string): Promise<void> {
    await this.redis.del(this.key(tenant, idempotencyKey));
  }
}
