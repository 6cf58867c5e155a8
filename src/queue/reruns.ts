// Which jobs re-ran a job's stored audio, newest last (the last 100), kept for the retention period.

import type { Redis } from 'ioredis';
import { serviceKey } from './service-keys.ts';

const MAX_KEPT = 100;

export class RerunLog {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  private key(jobId: string): string {
    return serviceKey(this.prefix, 'reruns', jobId);
  }

  async add(originalId: string, rerunId: string): Promise<void> {
    const key = this.key(originalId);
    await this.redis.multi().rpush(key, rerunId).ltrim(key, -MAX_KEPT, -1).expire(key, this.retentionSeconds).exec();
  }

  async list(originalId: string): Promise<string[]> {
    return this.redis.lrange(this.key(originalId), 0, -1);
  }
}
