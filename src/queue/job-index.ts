// Each tenant's job index (job ids by submit time, newest first) and the per-tenant queue counts
// read from it: listings and counts never look at other tenants' jobs.

import type { Redis } from 'ioredis';
import { finishedLogKey } from './outcomes.ts';
import { runScript, script, serviceKey } from './service-keys.ts';

/** BullMQ's keys for the analysis queue (queue.keys), and the prefix of its job hashes. */
export interface BullKeys {
  active: string;
  completed: string;
  failed: string;
  delayed: string;
  prioritized: string;
  jobPrefix: string;
}

export function bullKeys(queue: { keys: Record<string, string>; toKey(type: string): string }): BullKeys {
  const k = queue.keys;
  return {
    active: k.active,
    completed: k.completed,
    failed: k.failed,
    delayed: k.delayed,
    prioritized: k.prioritized,
    jobPrefix: queue.toKey(''),
  };
}

export interface TenantCounts {
  waiting: number;
  prioritized: number;
  active: number;
  delayed: number;
  completed: number;
  failed: number;
  finishedSince: number;
}

/** A listing position: strictly older than this (submit time, then id). */
export interface IndexCursor {
  scoreMs: number;
  id: string;
}

/** Submit times a listing keeps to: at or after fromMs, before toMs (either open). */
export interface SubmitRange {
  fromMs?: number;
  toMs?: number;
}

export const jobIndexKey = (prefix: string, tenant: string): string => serviceKey(prefix, 'jobs', tenant);

export class JobIndex {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  async add(tenant: string, jobId: string, createdAtMs: number): Promise<void> {
    await this.redis.zadd(jobIndexKey(this.prefix, tenant), createdAtMs, jobId);
  }

  async remove(tenant: string, jobId: string): Promise<void> {
    await this.redis.zrem(jobIndexKey(this.prefix, tenant), jobId);
  }

  /** Job ids newest first, strictly older than the cursor (score, id), within the range: the
   * score is the submit time, so Redis starts and stops the scan at the range's ends. */
  async page(
    tenant: string,
    before: IndexCursor | null,
    count: number,
    range: SubmitRange = {},
  ): Promise<IndexCursor[]> {
    const toMs = range.toMs ?? Number.POSITIVE_INFINITY;
    // Both upper bounds are exclusive; the cursor's own millisecond is read whole for its ties.
    const max = Math.min(before ? before.scoreMs : Number.POSITIVE_INFINITY, toMs);
    const raw = await runScript(
      this.redis,
      INDEX_PAGE,
      [jobIndexKey(this.prefix, tenant)],
      [
        before && before.scoreMs < toMs ? before.scoreMs : '',
        before?.id ?? '',
        Number.isFinite(max) ? `(${max}` : '+inf',
        range.fromMs === undefined ? '-inf' : range.fromMs,
        count,
      ],
    );
    if (!isStrings(raw) || raw.length % 2 !== 0) throw new Error('the index page script answered unexpectedly');
    const rows: IndexCursor[] = [];
    for (let i = 0; i < raw.length; i += 2) rows.push({ id: raw[i], scoreMs: Number(raw[i + 1]) });
    return rows;
  }

  /**
   * One tenant's jobs by BullMQ state, and how many finished since sinceMs, in one script. Cost:
   * set intersections with the tenant's index (in Redis's C code), never a look at other tenants'
   * jobs. Index entries older than the retention are checked one by one and dropped once BullMQ
   * has removed their job (younger ones cannot be gone: removal counts from the finish time).
   */
  async counts(tenant: string, bull: BullKeys, sinceMs: number): Promise<TenantCounts> {
    const raw = await runScript(
      this.redis,
      TENANT_COUNTS,
      [
        jobIndexKey(this.prefix, tenant),
        bull.active,
        bull.completed,
        bull.failed,
        bull.delayed,
        bull.prioritized,
        finishedLogKey(this.prefix),
      ],
      [bull.jobPrefix, sinceMs, Date.now() - this.retentionSeconds * 1000],
    );
    if (!Array.isArray(raw) || raw.length !== 7) throw new Error('the tenant counts script answered unexpectedly');
    const [waiting, prioritized, active, delayed, completed, failed, finishedSince] = raw.map(Number);
    return { waiting, prioritized, active, delayed, completed, failed, finishedSince };
  }
}

// KEYS: tenant index, active list, completed, failed, delayed, prioritized (zsets), finished log.
// ARGV: job hash prefix (existence checks only), since (ms), retention cut (ms). The active list
// is short: one entry per running analysis. Waiting is the rest: wait list, paused, children.
const isStrings = (v: unknown): v is string[] => Array.isArray(v) && v.every((x) => typeof x === 'string');

// A page newest first: the ties at the cursor's millisecond older than its id (read whole, since
// ZREVRANGEBYSCORE orders ties by member descending and a bounded look-ahead would skip some), then
// the rows below it. ARGV: cursor ms or '', cursor id, exclusive max, min, count.
const INDEX_PAGE = script(`
local out, n = {}, tonumber(ARGV[5])
if ARGV[1] ~= '' and tonumber(ARGV[1]) >= (tonumber(ARGV[4]) or -math.huge) then
  for _, id in ipairs(redis.call('ZREVRANGEBYSCORE', KEYS[1], ARGV[1], ARGV[1])) do
    if #out >= 2 * n then break end
    if id < ARGV[2] then out[#out + 1] = id; out[#out + 1] = ARGV[1] end
  end
end
if #out < 2 * n then
  local rest = redis.call('ZREVRANGEBYSCORE', KEYS[1], ARGV[3], ARGV[4], 'WITHSCORES', 'LIMIT', 0, n - #out / 2)
  for _, v in ipairs(rest) do out[#out + 1] = v end
end
return out
`);

const TENANT_COUNTS = script(`
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
`);
