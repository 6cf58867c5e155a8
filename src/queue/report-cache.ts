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

  async get(jobId: string): Promise<string | null> {
    return this.redis.get(serviceKey(this.prefix, 'report', jobId));
  }
}
