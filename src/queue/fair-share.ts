// Fair share between tenants on one BullMQ queue (open-source BullMQ has no job groups): start-time
// fair queueing through BullMQ priorities, where the lower number runs first. A job's priority is
// its tenant's virtual start, max(the tenant's previous priority + 1, the clock); the clock is the
// highest priority the workers have started. A burst of 200 from one tenant gets clock..clock+199;
// another tenant's single job then gets the clock and runs at the next free slot.
//
// Nothing is counted down, so nothing drifts: a lost or stale tenant entry restarts at the clock.
// An idle tenant banks no credit for later (it, too, restarts at the clock). A retry or a stalled
// job keeps its priority (BullMQ re-adds it with it), which is at most the clock: it runs before
// newer work. Every priority is at least 1, so no job takes BullMQ's plain FIFO lane, which would
// run before all prioritized jobs.
//
// BullMQ allows priorities up to 2^21 - 1, and the clock moves about one step per job started. Once
// past REBASE_AT it restarts at 0 once a worker, after a job or on finding nothing to do, sees the
// queue empty (nothing queued holds an old priority then). A queue that never empties past that point clamps new jobs to the
// limit: fairness lapses to FIFO among them, nothing stalls. A submission whose priority was taken
// just before a restart keeps its old, larger one: it runs after newer work, once per restart.

import type { Queue, Worker } from 'bullmq';
import type { Redis } from 'ioredis';
import { runScript, script, serviceKey } from './service-keys.ts';

/** BullMQ's PRIORITY_LIMIT (bullmq/dist/esm/classes/job.js). */
export const PRIORITY_LIMIT = 2 ** 21 - 1;
export const REBASE_AT = 2 ** 20;

// KEYS: the fair-share hash. ARGV: tenant, priority limit.
const NEXT_PRIORITY = script(`
local clock = tonumber(redis.call('HGET', KEYS[1], 'clock') or '0')
local last = tonumber(redis.call('HGET', KEYS[1], 't:' .. ARGV[1]) or '0')
local priority = math.min(math.max(last + 1, clock, 1), tonumber(ARGV[2]))
redis.call('HSET', KEYS[1], 't:' .. ARGV[1], priority)
return priority
`);

// KEYS: the fair-share hash. ARGV: a started job's priority.
const ADVANCE_CLOCK = script(`
local clock = tonumber(redis.call('HGET', KEYS[1], 'clock') or '0')
if tonumber(ARGV[1]) > clock then redis.call('HSET', KEYS[1], 'clock', ARGV[1]) end
return 1
`);

// KEYS: the fair-share hash. ARGV: the clock the caller saw (no restart if it moved since).
const RESTART = script(`
if redis.call('HGET', KEYS[1], 'clock') == ARGV[1] then redis.call('DEL', KEYS[1]) return 1 end
return 0
`);

export class FairShare {
  private readonly key: string;

  constructor(
    private readonly redis: Redis,
    prefix: string,
    private readonly rebaseAt = REBASE_AT,
  ) {
    this.key = serviceKey(prefix, 'fair');
  }

  /** The priority for a tenant's next job; take it right before adding the job. */
  async nextPriority(tenant: string): Promise<number> {
    return Number(await runScript(this.redis, NEXT_PRIORITY, [this.key], [tenant, PRIORITY_LIMIT]));
  }

  /** A worker started a job with this priority (0: a job from before fair share, ignored). */
  async started(priority: number): Promise<void> {
    if (priority > 0) await runScript(this.redis, ADVANCE_CLOCK, [this.key], [priority]);
  }

  async clock(): Promise<number> {
    return Number((await this.redis.hget(this.key, 'clock')) ?? 0);
  }

  /** Restarts the clock once it is past rebaseAt and the queue holds no job at all; true if it did. */
  async restartIfIdle(jobsInQueue: () => Promise<number>): Promise<boolean> {
    const seen = await this.redis.hget(this.key, 'clock');
    if (seen === null || Number(seen) < this.rebaseAt) return false;
    if ((await jobsInQueue()) > 0) return false;
    return Number(await runScript(this.redis, RESTART, [this.key], [seen])) === 1;
  }
}

/** Keeps the clock with a worker: each job it starts advances it; an emptied queue may restart it. */
export function followClock<D, R>(
  worker: Worker<D, R>,
  queue: Queue<D, R>,
  fair: FairShare,
  onError: (error: Error) => void,
): void {
  const fail = (error: unknown) => onError(error instanceof Error ? error : new Error(String(error)));
  worker.on('active', (job) => {
    fair.started(job.priority).catch(fail);
  });
  // After each finished job too, not only on 'drained': a worker says that once, when its first
  // slot finds nothing, while its other slots may still run the queue's last jobs.
  const restart = () => {
    fair
      .restartIfIdle(() =>
        queue.getJobCountByTypes('active', 'wait', 'prioritized', 'delayed', 'paused', 'waiting-children'),
      )
      .catch(fail);
  };
  worker.on('drained', restart);
  worker.on('completed', restart);
  worker.on('failed', restart);
}
