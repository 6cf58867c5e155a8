// Job outcomes as the workers record them: one marker per job (so a re-run is counted once), the
// last hour's finishes (for "finished in the last minute") and the service-wide counters.

import type { Redis } from 'ioredis';
import { runScript, script, serviceKey } from './service-keys.ts';

export type Outcome = 'completed' | 'failed';

/** Upper bounds of the analysis-time histogram's buckets (seconds). */
export const ANALYSIS_BUCKETS_SECONDS: readonly number[] = [0.5, 1, 2, 5, 10, 30, 60, 120, 300, 600];

export interface OutcomeCounters {
  jobs: Record<string, number>;
  analysisSumSeconds: number;
  analysisCount: number;
  /** Analyses that took at most each bound of ANALYSIS_BUCKETS_SECONDS (cumulative). */
  analysisBuckets: Array<{ leSeconds: number; count: number }>;
}

// KEYS: outcome marker, finished log, job counters, analysis counters.
// ARGV: job id, outcome, now (ms), marker TTL (s), analysis seconds or '', histogram bucket bounds.
const RECORD_FINISHED = script(`
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
    for i = 6, #ARGV do
      if tonumber(ARGV[5]) <= tonumber(ARGV[i]) then redis.call('HINCRBY', KEYS[4], 'le:' .. ARGV[i], 1) end
    end
  end
end
redis.call('SET', KEYS[1], ARGV[2], 'EX', ARGV[4])
redis.call('ZADD', KEYS[2], ARGV[3], ARGV[1] .. ':' .. ARGV[2])
redis.call('ZREMRANGEBYSCORE', KEYS[2], '-inf', tonumber(ARGV[3]) - 3600000)
return 1
`);

/** The finished log's key: the tenant counts (job-index.ts) read it too. */
export const finishedLogKey = (prefix: string): string => serviceKey(prefix, 'finished');

const isOutcome = (value: string | null): value is Outcome => value === 'completed' || value === 'failed';

export class Outcomes {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  private key(...parts: string[]): string {
    return serviceKey(this.prefix, ...parts);
  }

  /**
   * Idempotent: a job's outcome is counted once however often it is recorded (a stalled job is
   * re-run and records again). A later, different outcome (a re-run that ended otherwise) moves
   * the count; analysis time is added whenever the outcome changes, as that work was done.
   */
  async record(jobId: string, outcome: Outcome, analysisSeconds: number | null): Promise<void> {
    await runScript(
      this.redis,
      RECORD_FINISHED,
      [
        this.key('outcome', jobId),
        finishedLogKey(this.prefix),
        this.key('metrics', 'jobs'),
        this.key('metrics', 'analysis'),
      ],
      [
        jobId,
        outcome,
        Date.now(),
        this.retentionSeconds,
        analysisSeconds === null ? '' : String(analysisSeconds),
        ...ANALYSIS_BUCKETS_SECONDS,
      ],
    );
  }

  /** The recorded outcome of a job, or null before it finished (or after retention). */
  async outcomeOf(jobId: string): Promise<Outcome | null> {
    const stored = await this.redis.get(this.key('outcome', jobId));
    return isOutcome(stored) ? stored : null;
  }

  async finishedSince(sinceMs: number): Promise<number> {
    return this.redis.zcount(finishedLogKey(this.prefix), sinceMs, '+inf');
  }

  async counters(): Promise<OutcomeCounters> {
    const [jobs, analysis] = await Promise.all([
      this.redis.hgetall(this.key('metrics', 'jobs')),
      this.redis.hgetall(this.key('metrics', 'analysis')),
    ]);
    return {
      jobs: Object.fromEntries(Object.entries(jobs).map(([k, v]) => [k, Number(v)])),
      analysisSumSeconds: Number(analysis.sumSeconds ?? 0),
      analysisCount: Number(analysis.count ?? 0),
      analysisBuckets: ANALYSIS_BUCKETS_SECONDS.map((leSeconds) => ({
        leSeconds,
        count: Number(analysis[`le:${leSeconds}`] ?? 0),
      })),
    };
  }
}
