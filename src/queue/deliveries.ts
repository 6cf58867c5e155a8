// Webhook delivery attempts per job: the last 50, kept for the retention period.

import type { Redis } from 'ioredis';
import { serviceKey } from './service-keys.ts';

export interface DeliveryAttempt {
  deliveryId: string;
  event: string;
  attempt: number;
  at: string;
  /** HTTP status, or null when the request did not get an answer. */
  statusCode: number | null;
  outcome: 'delivered' | 'retrying' | 'failed';
  error: string | null;
}

export const deliveriesKey = (prefix: string, jobId: string): string => serviceKey(prefix, 'deliveries', jobId);

/** Stored attempts are the JSON add() wrote. */
export function parseDeliveries(lines: readonly string[]): DeliveryAttempt[] {
  return lines.map((line) => JSON.parse(line) as DeliveryAttempt);
}

export class DeliveryLog {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  async add(jobId: string, attempt: DeliveryAttempt): Promise<void> {
    const key = deliveriesKey(this.prefix, jobId);
    await this.redis
      .multi()
      .rpush(key, JSON.stringify(attempt))
      .ltrim(key, -50, -1)
      .expire(key, this.retentionSeconds)
      .exec();
  }

  async list(jobId: string): Promise<DeliveryAttempt[]> {
    return parseDeliveries(await this.redis.lrange(deliveriesKey(this.prefix, jobId), 0, -1));
  }
}
