// What a job listing costs Redis: the dashboard polls it every 2 s, so a page of 50 jobs must be a
// fixed handful of commands (index page, one job-read script, the "more?" probe), not a few per job.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { client, type Client } from './client.ts';
import { KEYS, startService, type TestService } from './harness.ts';

describe('GET /v1/jobs', () => {
  let svc: TestService;
  let api: Client;
  beforeAll(async () => {
    svc = await startService({ worker: false, env: { EARMARK_RATE_LIMIT_PER_MINUTE: '0' } });
    api = client(svc.url);
  });
  afterAll(async () => {
    await svc?.close();
  });

  it('lists 50 jobs with 4 Redis commands (152 when each job was read on its own)', async () => {
    for (let i = 0; i < 50; i++) {
      const res = await api.postJson(
        '/v1/jobs',
        { sourceUrl: `http://127.0.0.1:9/take-${i}.wav`, profile: 'ebu-r128' },
        KEYS.alpha,
      );
      expect(res.status).toBe(202);
    }
    // Once first, so Redis has the script and the count is the steady state (no NOSCRIPT retry).
    expect((await api.get('/v1/jobs?limit=1', KEYS.alpha)).status).toBe(200);
    const redis = svc.api.deps.redis;
    const sent: string[] = [];
    const send = redis.sendCommand.bind(redis);
    redis.sendCommand = (command, stream) => {
      sent.push(command.name);
      return send(command, stream);
    };
    try {
      const res = await api.get('/v1/jobs?limit=50', KEYS.alpha);
      expect(res.body.items).toHaveLength(50);
      expect(res.body.nextCursor).toBeNull();
      // The job-read script, the index page script, the "more?" probe (the same script) and the
      // page's current sign-offs.
      expect(sent).toEqual(['evalsha', 'evalsha', 'evalsha', 'evalsha']);
    } finally {
      redis.sendCommand = send;
    }
  });
});
