// Jobs as the API reads them: by id for one tenant (another tenant's job answers exactly like a
// missing one), a tenant's listing, and a completed job's report. One script reads any number of
// jobs with their state and webhook deliveries, so a listing page costs one Redis command, not
// three per job, and a job's hash and state are read together (a job finishing in between
// cannot show a completed state without its result).

import { Job, type JobJsonRaw } from 'bullmq';
import type { Redis } from 'ioredis';
import { EarmarkError } from '../errors/index.ts';
import type { AnalyzeJobV1, AnalyzeResultV1 } from './contract.ts';
import { deliveriesKey, parseDeliveries, type DeliveryAttempt } from './deliveries.ts';
import { jobIndexKey, type IndexCursor, type JobIndex, type SubmitRange } from './job-index.ts';
import { jobView, stateOf, type JobState, type JobView } from './job-view.ts';
import type { AnalysisQueue } from './queues.ts';
import type { ReportCache } from './report-cache.ts';
import { runScript, script } from './service-keys.ts';

export type AnalysisJob = Job<AnalyzeJobV1, AnalyzeResultV1>;

export interface LoadedJob {
  job: AnalysisJob;
  state: JobState;
  deliveries: DeliveryAttempt[];
}

export interface ListQuery {
  cursor: IndexCursor | null;
  limit: number;
  state?: JobState;
  verdict?: 'pass' | 'warn' | 'fail';
  profile?: string;
  /** Case-insensitive substring of the file name (a URL job: its URL) or the externalId. */
  search?: string;
  /** Submit times kept to; the index's score is the submit time, so the scan starts and stops there. */
  submitted?: SubmitRange;
}

function matchesSearch(view: JobView, needle: string): boolean {
  const name = view.source.kind === 'upload' ? view.source.fileName : view.source.url;
  return name.toLowerCase().includes(needle) || (view.externalId ?? '').toLowerCase().includes(needle);
}

/** One request examines at most this many index entries, whatever the filters skip. */
const MAX_EXAMINED = 1000;

// KEYS: completed, failed (zsets), active (list), the tenant's index.
// ARGV: job hash prefix, deliveries key prefix, job ids. Per id: {} when the job is gone (its
// index entry is dropped), else {BullMQ state folded as job-view.ts does, hash fields, deliveries}.
const READ_JOBS = script(`
-- The active list is short: one entry per running analysis.
local active = {}
for _, id in ipairs(redis.call('LRANGE', KEYS[3], 0, -1)) do active[id] = true end
local out = {}
for i = 3, #ARGV do
  local id = ARGV[i]
  local fields = redis.call('HGETALL', ARGV[1] .. id)
  if #fields == 0 then
    redis.call('ZREM', KEYS[4], id)
    out[#out + 1] = {}
  else
    local state = 'waiting'
    if redis.call('ZSCORE', KEYS[1], id) then state = 'completed'
    elseif redis.call('ZSCORE', KEYS[2], id) then state = 'failed'
    elseif active[id] then state = 'active' end
    out[#out + 1] = {state, fields, redis.call('LRANGE', ARGV[2] .. id, 0, -1)}
  end
end
return out
`);

const isStrings = (value: unknown): value is string[] =>
  Array.isArray(value) && value.every((v) => typeof v === 'string');

/** BullMQ's job hash as Job.fromJSON takes it; fields BullMQ always writes get its own defaults. */
function jobJson(id: string, flat: readonly string[]): JobJsonRaw {
  const f = new Map<string, string>();
  for (let i = 0; i + 1 < flat.length; i += 2) f.set(flat[i], flat[i + 1]);
  const optional = (name: string) => f.get(name);
  return {
    id,
    name: f.get('name') ?? '',
    data: f.get('data') ?? '{}',
    delay: f.get('delay') ?? '0',
    opts: f.get('opts') ?? '{}',
    progress: f.get('progress') ?? '0',
    priority: f.get('priority') ?? '0',
    timestamp: f.get('timestamp') ?? '0',
    failedReason: f.get('failedReason') ?? '',
    returnvalue: f.get('returnvalue') ?? 'null',
    attemptsMade: optional('attemptsMade'),
    finishedOn: optional('finishedOn'),
    processedOn: optional('processedOn'),
    stacktrace: optional('stacktrace'),
    atm: optional('atm'),
    ats: optional('ats'),
    stc: optional('stc'),
  };
}

export class JobsRepository {
  constructor(
    private readonly redis: Redis,
    private readonly queue: AnalysisQueue,
    private readonly index: JobIndex,
    private readonly reports: ReportCache,
    private readonly prefix: string,
    /** The report's copy in storage, read when the cached one has expired. */
    private readonly archivedReport: (jobId: string) => Promise<string | null>,
  ) {}

  /** The tenant's jobs by id (absent: gone), in one Redis command. */
  async read(tenant: string, ids: readonly string[]): Promise<Map<string, LoadedJob>> {
    const found = new Map<string, LoadedJob>();
    if (ids.length === 0) return found;
    const k = this.queue.keys;
    const rows = await runScript(
      this.redis,
      READ_JOBS,
      [k.completed, k.failed, k.active, jobIndexKey(this.prefix, tenant)],
      [this.queue.toKey(''), deliveriesKey(this.prefix, ''), ...ids],
    );
    if (!Array.isArray(rows) || rows.length !== ids.length)
      throw new Error('the job read script answered unexpectedly');
    rows.forEach((row: unknown, i) => {
      if (!Array.isArray(row) || row.length !== 3) return;
      const [state, fields, deliveries]: unknown[] = row;
      if (typeof state !== 'string' || !isStrings(fields) || !isStrings(deliveries))
        throw new Error('the job read script answered unexpectedly');
      const job = Job.fromJSON<AnalyzeJobV1, AnalyzeResultV1>(this.queue, jobJson(ids[i], fields), ids[i]);
      if (job.data.tenant === tenant)
        found.set(ids[i], { job, state: stateOf(state), deliveries: parseDeliveries(deliveries) });
    });
    return found;
  }

  async load(tenant: string, id: string): Promise<LoadedJob> {
    const loaded = (await this.read(tenant, [id])).get(id);
    if (!loaded) throw new EarmarkError('not_found', `no job ${id}`);
    return loaded;
  }

  async view(tenant: string, id: string): Promise<JobView> {
    const { job, state, deliveries } = await this.load(tenant, id);
    return jobView(job, state, deliveries);
  }

  /** The job's state, or null when it is gone (for answering a repeated submission). */
  async stateOf(tenant: string, id: string): Promise<JobState | null> {
    return (await this.read(tenant, [id])).get(id)?.state ?? null;
  }

  async completed(tenant: string, id: string): Promise<AnalysisJob> {
    const { job, state } = await this.load(tenant, id);
    if (state !== 'completed') throw new EarmarkError('report_not_ready', `job ${id} is ${state}`);
    return job;
  }

  /** The report of a completed job, as stored (JSON text). */
  async report(tenant: string, id: string): Promise<string> {
    await this.completed(tenant, id);
    const json = (await this.reports.get(id)) ?? (await this.archivedReport(id));
    if (!json) throw new EarmarkError('not_found', `the report of job ${id} is past its retention period`);
    return json;
  }

  /** A page of the tenant's jobs, newest first, filtered while scanning its index. */
  async list(tenant: string, query: ListQuery): Promise<{ items: JobView[]; next: IndexCursor | null }> {
    let cursor = query.cursor;
    const items: JobView[] = [];
    const range = query.submitted ?? {};
    const needle = query.search?.toLowerCase();
    // A filter that skips most jobs (a search) would cost a round trip per few rows: each batch
    // doubles, up to 100 and never past the scan budget.
    let batch = Math.min(100, query.limit * 2);
    for (let examined = 0; items.length < query.limit && examined < MAX_EXAMINED; ) {
      const page = await this.index.page(tenant, cursor, Math.min(batch, MAX_EXAMINED - examined), range);
      batch = Math.min(100, batch * 2);
      if (page.length === 0) {
        cursor = null;
        break;
      }
      const jobs = await this.read(
        tenant,
        page.map((row) => row.id),
      );
      for (const row of page) {
        examined += 1;
        cursor = row;
        const loaded = jobs.get(row.id);
        if (!loaded) continue;
        const view = jobView(loaded.job, loaded.state, loaded.deliveries);
        if (
          (query.state && view.state !== query.state) ||
          (query.verdict && view.verdict !== query.verdict) ||
          (query.profile && view.profile.id !== query.profile) ||
          (needle && !matchesSearch(view, needle))
        )
          continue;
        items.push(view);
        if (items.length === query.limit) break;
      }
    }
    const more = cursor !== null && (await this.index.page(tenant, cursor, 1, range)).length > 0;
    return { items, next: more ? cursor : null };
  }
}
