// The listing's search and submit-time range against the real Redis (testRedisUrl, unique
// prefix): paging a filtered list by cursor returns each matching job exactly once, newest first,
// across pages that the scan budget (MAX_EXAMINED) cuts short, across same-millisecond ties, and
// a range starts and stops the index scan instead of examining every job.

import { randomBytes } from 'node:crypto';
import type { Redis } from 'ioredis';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/index.ts';
import { createRedis } from '../../src/queue/connection.ts';
import { ANALYZE_JOB_V1, type AnalyzeJobV1 } from '../../src/queue/contract.ts';
import type { IndexCursor } from '../../src/queue/job-index.ts';
import { JobsRepository, type ListQuery } from '../../src/queue/jobs-repository.ts';
import { createAnalysisQueue, type AnalysisQueue } from '../../src/queue/queues.ts';
import { purgePrefix } from '../../src/queue/service-keys.ts';
import { openServiceStores, type ServiceStores } from '../../src/queue/store.ts';
import { testRedisUrl } from '../helpers/redis.ts';

const prefix = `tf${randomBytes(6).toString('hex')}`;
const TENANT = 'delta';
const BASE_MS = Date.UTC(2026, 10, 2, 8, 0, 0);
const JOBS = 1100;
/** Five more jobs in the same millisecond as job 50. */
const TIES = 5;
let redis: Redis;
let queue: AnalysisQueue;
let stores: ServiceStores;
let jobs: JobsRepository;

interface Planted {
  id: string;
  atMs: number;
  fileName: string;
  externalId: string;
}
const planted: Planted[] = [];

const idOf = (i: number) => `j_f${String(i).padStart(6, '0')}`;
const data = (p: Planted): AnalyzeJobV1 => ({
  tenant: TENANT,
  source: { kind: 'upload', storageKey: `u/${p.id}`, fileName: p.fileName, sizeBytes: 1, sha256: 'x' },
  profileId: 'ebu-r128',
  profileVersion: '1.0.0',
  profile: { id: 'ebu-r128', version: '1.0.0', name: 'x', description: 'x', basis: 'x', rules: [] },
  callbackUrl: null,
  externalId: p.externalId,
  metadata: null,
  submittedAt: new Date(p.atMs).toISOString(),
});

/** Newest first, as the index orders them: by time, then id descending within a millisecond. */
const newestFirst = (a: Planted, b: Planted) => b.atMs - a.atMs || (a.id < b.id ? 1 : -1);

/** Every page until nextCursor is null; the ids in order and how many pages it took. */
async function allPages(query: Omit<ListQuery, 'cursor'>): Promise<{ ids: string[]; pages: number; short: number }> {
  const ids: string[] = [];
  let cursor: IndexCursor | null = null;
  let pages = 0;
  let short = 0;
  do {
    const page = await jobs.list(TENANT, { ...query, cursor });
    ids.push(...page.items.map((v) => v.id));
    pages += 1;
    if (page.next && page.items.length < query.limit) short += 1;
    cursor = page.next;
    if (pages > 2000) throw new Error('paging does not end');
  } while (cursor);
  return { ids, pages, short };
}

beforeAll(async () => {
  redis = createRedis(testRedisUrl(), 'worker');
  const config = loadConfig({
    REDIS_URL: testRedisUrl(),
    EARMARK_QUEUE_PREFIX: prefix,
    EARMARK_STORAGE_DIR: '/tmp',
    EARMARK_API_KEYS: '[]',
  });
  queue = createAnalysisQueue(redis, config, () => undefined);
  stores = openServiceStores(redis, prefix, 60);
  jobs = new JobsRepository(redis, queue, stores.index, stores.reports, prefix, async () => null);
  for (let i = 0; i < JOBS + TIES; i++) {
    const atMs = i < JOBS ? BASE_MS + i * 1000 : BASE_MS + 50 * 1000;
    // Sparse matches for the search: one job in 250 carries the word in its externalId.
    const externalId = i % 250 === 7 ? `Order-NEEDLE-${i}` : `order-${i}`;
    planted.push({ id: idOf(i), atMs, fileName: `Take-${i}.wav`, externalId });
  }
  for (let start = 0; start < planted.length; start += 200) {
    const batch = planted.slice(start, start + 200);
    await queue.addBulk(
      batch.map((p) => ({ name: ANALYZE_JOB_V1, data: data(p), opts: { jobId: p.id, timestamp: p.atMs } })),
    );
    for (const p of batch) await stores.index.add(TENANT, p.id, p.atMs);
  }
}, 60_000);
afterAll(async () => {
  await queue.close();
  await purgePrefix(redis, prefix);
  await redis.quit();
});

describe('JobsRepository.list filters', () => {
  it('search: case-insensitive on externalId, every match once across pages the scan budget cuts short', async () => {
    const expected = planted.filter((p) => p.externalId.toLowerCase().includes('needle')).sort(newestFirst);
    expect(expected).toHaveLength(5);
    const { ids, short } = await allPages({ limit: 10, search: 'NeEdLe' });
    expect(ids).toEqual(expected.map((p) => p.id));
    // 1105 jobs and 1000 examined per request at most: some page stopped early and said "more".
    expect(short).toBeGreaterThan(0);
  });

  it('a sparse search reads in growing batches: a page that examines 1000 jobs is a few dozen commands', async () => {
    const sent: string[] = [];
    const send = redis.sendCommand.bind(redis);
    redis.sendCommand = (command, stream) => {
      sent.push(command.name);
      return send(command, stream);
    };
    try {
      const page = await jobs.list(TENANT, { cursor: null, limit: 10, search: 'needle' });
      expect(page.items).toHaveLength(4);
      expect(page.next).not.toBeNull();
    } finally {
      redis.sendCommand = send;
    }
    // Batches of 20, 40, 80, eight of 100 and the last 60: 12 index pages, 12 reads and the
    // "more?" probe (25 commands, measured 25-26); fixed batches of 20 took 102.
    expect(sent.length).toBeLessThanOrEqual(30);
  });

  it('search: case-insensitive on the file name', async () => {
    const expected = planted.filter((p) => p.fileName.toLowerCase().includes('take-109')).sort(newestFirst);
    const { ids } = await allPages({ limit: 3, search: 'TAKE-109' });
    expect(ids).toEqual(expected.map((p) => p.id));
    expect(ids).toHaveLength(11); // Take-109 and Take-1090..1099
  });

  it('date range: from inclusive, to exclusive, paged without duplicates or gaps', async () => {
    const fromMs = BASE_MS + 101 * 1000;
    const toMs = BASE_MS + 200 * 1000;
    const expected = planted.filter((p) => p.atMs >= fromMs && p.atMs < toMs).sort(newestFirst);
    expect(expected).toHaveLength(99); // jobs 101..199: job 200 sits exactly on the exclusive end
    const { ids, pages } = await allPages({ limit: 10, submitted: { fromMs, toMs } });
    expect(ids).toEqual(expected.map((p) => p.id));
    expect(new Set(ids).size).toBe(ids.length);
    expect(pages).toBe(10);
    const first = await jobs.list(TENANT, { cursor: null, limit: 1, submitted: { fromMs, toMs } });
    expect(Date.parse(first.items[0].createdAt)).toBe(toMs - 1000);
  });

  it('date range and search together', async () => {
    const range = { fromMs: BASE_MS + 101 * 1000, toMs: BASE_MS + 200 * 1000 };
    const { ids } = await allPages({ limit: 4, search: 'take-15', submitted: range });
    expect(ids).toEqual([159, 158, 157, 156, 155, 154, 153, 152, 151, 150].map(idOf));
  });

  it('same-millisecond ties inside a range page one by one', async () => {
    const range = { fromMs: BASE_MS + 50 * 1000, toMs: BASE_MS + 50 * 1000 + 1 };
    const expected = planted.filter((p) => p.atMs === range.fromMs).sort(newestFirst);
    expect(expected).toHaveLength(1 + TIES);
    const { ids, pages } = await allPages({ limit: 2, submitted: range });
    expect(ids).toEqual(expected.map((p) => p.id));
    expect(pages).toBe(3);
  });

  it('a range starts and stops the scan: the ten oldest jobs cost one read, not a thousand examined', async () => {
    const sent: string[] = [];
    const send = redis.sendCommand.bind(redis);
    redis.sendCommand = (command, stream) => {
      sent.push(command.name);
      return send(command, stream);
    };
    try {
      const page = await jobs.list(TENANT, { cursor: null, limit: 100, submitted: { toMs: BASE_MS + 10 * 1000 } });
      expect(page.items.map((v) => v.id)).toEqual([9, 8, 7, 6, 5, 4, 3, 2, 1, 0].map(idOf));
      expect(page.next).toBeNull();
    } finally {
      redis.sendCommand = send;
    }
    // One index page, one job read, one "more?" probe
    // (each a script; a first load adds an eval after its evalsha)
    expect(sent.filter((name) => name === 'evalsha')).toHaveLength(3);
    expect(sent.filter((name) => name !== 'evalsha' && name !== 'eval')).toEqual([]);
  });
});
