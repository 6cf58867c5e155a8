// A small load run (5 clients, 20 jobs) through the same code as `npm run load`: every accepted
// job ends completed with a report, none lost. Figures are printed, not asserted.
import { describe, expect, it } from 'vitest';
import { formatLoad, runLoad } from '../../fixtures/load.ts';
import { testRedisUrl } from '../helpers/redis.ts';

describe('load', () => {
  it('5 clients, 20 jobs against an API and two workers: 0 lost, every accepted job completed', async () => {
    const r = await runLoad({ clients: 5, jobs: 20, secondsPerFile: 1, boundSeconds: 120, redisUrl: testRedisUrl() });
    console.log(`[load small]\n${formatLoad(r)}`);
    expect(r.accepted).toBe(20);
    expect(r.failedRequests).toBe(0);
    expect(r.completed).toBe(r.accepted);
    expect(r.failedJobs).toBe(0);
    expect(r.lost).toBe(0);
  }, 180_000);
});
