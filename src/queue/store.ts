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

// KEYS: outcome marker, finished log, job counters, analysis counters.
// ARGV: job id, outcome, now (ms), marker TTL (s), analysis seconds or ''.
const RECORD_FINISHED = `
local prev = redis.call('GET', KEYS[1])
if prev ~= ARGV[2] then
  if prev then
    redis.call('HINCRBY', KEYS[3], prev, -1)
    redis.call('ZREM', KEYS[2], ARGV[1] .. ':' .. prev)
  end
  redis.call('HINCRBY', KEYS[3], ARGV[2], 1)
  if ARGV[5] ~= '' then
    redis.call('HINCRBYFLOAT', KEYS[4], 'sumSeconds', ARGV[5])
    redis.call('HINCRBY', KEYS[4], 'count', 1)
  end
end
redis.call('SET', KEYS[1], ARGV[2], 'EX', ARGV[4])
redis.call('ZADD', KEYS[2], ARGV[3], ARGV[1] .. ':' .. ARGV[2])
redis.call('ZREMRANGEBYSCORE', KEYS[2], '-inf', tonumber(ARGV[3]) - 3600000)
return 1
`;

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

  /**
   * Idempotent: a job's outcome is counted once however often it is recorded (a stalled job is
   * re-run and records again). A later, different outcome (a re-run that ended otherwise) moves
   * the count; analysis time is added whenever the outcome changes, as that work was done.
   */
  async recordFinished(jobId: string, outcome: Outcome, analysisSeconds: number | null): Promise<void> {
    await this.redis.eval(RECORD_FINISHED, 4,
      this.key('outcome', jobId), this.key('finished'), this.key('metrics', 'jobs'), this.key('metrics', 'analysis'),
      jobId, outcome, Date.now(), this.retentionSeconds, analysisSeconds === null ? '' : String(analysisSeconds));
  }

  /** The recorded outcome of a job, or null before it finished (or after retention). */
  async finishedOutcome(jobId: string): Promise<Outcome | null> {
    return (await this.redis.get(this.key('outcome', jobId))) as Outcome | null;
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

  /**
   * One tenant's jobs by BullMQ state, and how many finished since sinceMs, in one script. Cost:
   * set intersections with the tenant's index (in Redis's C code), never a look at other tenants'
   * jobs. Index entries older than the retention are checked one by one and dropped once BullMQ
   * has removed their job (younger ones cannot be gone: removal counts from the finish time).
   */
  async tenantCounts(tenant: string, bull: BullKeys, sinceMs: number): Promise<TenantCounts> {
    const raw = await this.redis.eval(TENANT_COUNTS, 7,
      this.key('jobs', tenant), bull.active, bull.completed, bull.failed, bull.delayed, bull.prioritized, this.key('finished'),
      bull.jobPrefix, sinceMs, Date.now() - this.retentionSeconds * 1000) as number[];
    const [waiting, prioritized, active, delayed, completed, failed, finishedSince] = raw.map(Number);
    return { waiting, prioritized, active, delayed, completed, failed, finishedSince };
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

/** BullMQ's keys for the analysis queue (queue.keys), and the prefix of its job hashes. */
export interface BullKeys { active: string; completed: string; failed: string; delayed: string; prioritized: string; jobPrefix: string }

export function bullKeys(queue: { keys: Record<string, string>; toKey(type: string): string }): BullKeys {
  const k = queue.keys;
  return { active: k.active, completed: k.completed, failed: k.failed, delayed: k.delayed, prioritized: k.prioritized, jobPrefix: queue.toKey('') };
}

export interface TenantCounts { waiting: number; prioritized: number; active: number; delayed: number; completed: number; failed: number; finishedSince: number }

// KEYS: tenant index, active list, completed, failed, delayed, prioritized (zsets), finished log.
// ARGV: job hash prefix (existence checks only), since (ms), retention cut (ms). The active list
// is short: one entry per running analysis. Waiting is the rest: wait list, paused, children.
const TENANT_COUNTS = `
local idx = KEYS[1]
local function inter(other)
  local n = redis.pcall('ZINTERCARD', 2, idx, other)
  if type(n) == 'number' then return n end
  -- Redis before 7 has no ZINTERCARD: look each of the tenant's jobs up instead.
  local c = 0
  for _, id in ipairs(redis.call('ZRANGE', idx, 0, -1)) do
    if redis.call('ZSCORE', other, id) then c = c + 1 end
  end
  return c
end
for _, id in ipairs(redis.call('ZRANGEBYSCORE', idx, '-inf', '(' .. ARGV[3])) do
  if redis.call('EXISTS', ARGV[1] .. id) == 0 then redis.call('ZREM', idx, id) end
end
local total = redis.call('ZCARD', idx)
local completed = inter(KEYS[3])
local failed = inter(KEYS[4])
local delayed = inter(KEYS[5])
local prioritized = inter(KEYS[6])
local active = 0
for _, id in ipairs(redis.call('LRANGE', KEYS[2], 0, -1)) do
  if redis.call('ZSCORE', idx, id) then active = active + 1 end
end
local waiting = total - completed - failed - delayed - prioritized - active
-- The finished log holds the last hour as "<jobId>:<outcome>".
local finished = 0
for _, entry in ipairs(redis.call('ZRANGEBYSCORE', KEYS[7], ARGV[2], '+inf')) do
  if redis.call('ZSCORE', idx, string.match(entry, '^(.*):[^:]*$')) then finished = finished + 1 end
end
return {math.max(waiting, 0), prioritized, active, delayed, completed, failed, finished}
`;
