// Service state beside the BullMQ queues: each tenant's job index (newest first), idempotency
// keys, stored reports (with a TTL), webhook delivery attempts and outcome counters.
// Everything lives under `<prefix>:svc:` so one prefix isolates a deployment (or a test run).

import { createHash } from 'node:crypto';
import type { Redis } from 'ioredis';

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

export type Outcome = 'completed' | 'failed';

export class ServiceStore {
  constructor(readonly redis: Redis, readonly prefix: string, readonly retentionSeconds: number) {}

  private key(...parts: string[]): string {
    return [this.prefix, 'svc', ...parts].join(':');
  }

  async indexJob(tenant: string, jobId: string, createdAtMs: number): Promise<void> {
    await this.redis.zadd(this.key('jobs', tenant), createdAtMs, jobId);
  }

  async unindexJob(tenant: string, jobId: string): Promise<void> {
    await this.redis.zrem(this.key('jobs', tenant), jobId);
  }

  /** Job ids newest first, strictly older than the cursor (score, id). */
  async jobPage(tenant: string, before: { scoreMs: number; id: string } | null, count: number): Promise<Array<{ id: string; scoreMs: number }>> {
    const max = before ? `(${before.scoreMs + 1}` : '+inf';
    const raw = await this.redis.zrevrangebyscore(this.key('jobs', tenant), max, '-inf', 'WITHSCORES', 'LIMIT', 0, count + 50);
    const rows: Array<{ id: string; scoreMs: number }> = [];
    for (let i = 0; i < raw.length; i += 2) rows.push({ id: raw[i], scoreMs: Number(raw[i + 1]) });
    // Same-millisecond ties: ZREVRANGE orders them by member descending, so skip up to the cursor id.
    const after = before ? rows.filter((r) => r.scoreMs < before.scoreMs || r.id < before.id) : rows;
    return after.slice(0, count);
  }

  /** Claims an idempotency key for jobId; returns the existing claim when there is one. */
  async claimIdempotency(tenant: string, idempotencyKey: string, jobId: string, fingerprint: string): Promise<{ jobId: string; fingerprint: string } | null> {
    const key = this.key('idem', tenant, createHash('sha256').update(idempotencyKey).digest('hex'));
    const set = await this.redis.set(key, `${jobId} ${fingerprint}`, 'EX', this.retentionSeconds, 'NX');
    if (set === 'OK') return null;
    const existing = await this.redis.get(key);
    if (!existing) return this.claimIdempotency(tenant, idempotencyKey, jobId, fingerprint);
    const [existingId, existingFingerprint] = existing.split(' ');
    return { jobId: existingId, fingerprint: existingFingerprint };
  }

  async releaseIdempotency(tenant: string, idempotencyKey: string): Promise<void> {
    await this.redis.del(this.key('idem', tenant, createHash('sha256').update(idempotencyKey).digest('hex')));
  }

  async putReport(jobId: string, json: string): Promise<void> {
    await this.redis.set(this.key('report', jobId), json, 'EX', this.retentionSeconds);
  }

  async getReport(jobId: string): Promise<string | null> {
    return this.redis.get(this.key('report', jobId));
  }

  async addDelivery(jobId: string, attempt: DeliveryAttempt): Promise<void> {
    const key = this.key('deliveries', jobId);
    await this.redis.multi().rpush(key, JSON.stringify(attempt)).ltrim(key, -50, -1).expire(key, this.retentionSeconds).exec();
  }

  async deliveries(jobId: string): Promise<DeliveryAttempt[]> {
    const raw = await this.redis.lrange(this.key('deliveries', jobId), 0, -1);
    return raw.map((r) => JSON.parse(r) as DeliveryAttempt);
  }

  async recordFinished(jobId: string, outcome: Outcome, analysisSeconds: number | null): Promise<void> {
    const now = Date.now();
    const multi = this.redis.multi()
      .zadd(this.key('finished'), now, `${jobId}:${outcome}`)
      .zremrangebyscore(this.key('finished'), '-inf', now - 3_600_000)
      .hincrby(this.key('metrics', 'jobs'), outcome, 1);
    if (analysisSeconds !== null) {
      multi.hincrbyfloat(this.key('metrics', 'analysis'), 'sumSeconds', analysisSeconds).hincrby(this.key('metrics', 'analysis'), 'count', 1);
    }
    await multi.exec();
  }

  async finishedSince(sinceMs: number): Promise<number> {
    return this.redis.zcount(this.key('finished'), sinceMs, '+inf');
  }

  async counters(): Promise<{ jobs: Record<string, number>; analysisSumSeconds: number; analysisCount: number }> {
    const [jobs, analysis] = await Promise.all([this.redis.hgetall(this.key('metrics', 'jobs')), this.redis.hgetall(this.key('metrics', 'analysis'))]);
    return {
      jobs: Object.fromEntries(Object.entries(jobs).map(([k, v]) => [k, Number(v)])),
      analysisSumSeconds: Number(analysis.sumSeconds ?? 0),
      analysisCount: Number(analysis.count ?? 0),
    };
  }

  /** For tests: remove every service key under this prefix. */
  async purge(): Promise<void> {
    let cursor = '0';
    do {
      const [next, keys] = await this.redis.scan(cursor, 'MATCH', `${this.prefix}:*`, 'COUNT', 500);
      if (keys.length > 0) await this.redis.del(...keys);
      cursor = next;
    } while (cursor !== '0');
  }
}
