// Finished reports kept in Redis (with the retention as TTL) beside the copy in storage.

import type { Redis } from 'ioredis';
import { serviceKey } from './service-keys.ts';

export class ReportCache {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  async put(jobId: string, json: string): Promise<void> {
    await this.redis.set(serviceKey(this.prefix, 'report', jobId), json, 'EX', this.retentionSeconds);
  }

  /** The retention sweep removed the stored report: the copy here goes with it. */
  async drop(jobIds: readonly string[]): Promise<void> {
    if (jobIds.length === 0) return;
    const batch = this.redis.pipeline();
    for (const id of jobIds) batch.del(serviceKey(this.prefix, 'report', id));
    const failed = (await batch.exec())?.find(([error]) => error);
    if (failed?.[0]) throw failed[0];
  }

  async get(jobId: string): Promise<string | null> {
    return this.redis.get(serviceKey(this.prefix, 'report', jobId));
  }
}
