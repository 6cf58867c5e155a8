// The retention pass the worker schedules: stored uploads and reports older than maxAgeMs go, and
// with each report its cached copy in Redis, so the API never serves a report whose file is gone
// (the cache's TTL drops it about then anyway, but not after EARMARK_RETENTION_HOURS was lowered).

import type { ReportCache } from '../queue/report-cache.ts';
import type { Storage, Swept } from '../storage/index.ts';

const REPORT_KEY = /^reports\/(.+)\.json$/;

export async function retentionPass(storage: Storage, reports: ReportCache, maxAgeMs: number): Promise<Swept> {
  const swept = await storage.sweep(maxAgeMs);
  await reports.drop(swept.keys.flatMap((key) => REPORT_KEY.exec(key)?.[1] ?? []));
  return swept;
}
