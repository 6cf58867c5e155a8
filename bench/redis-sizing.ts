// Redis memory per 1,000 jobs, for the README's sizing: a private redis-server (no persistence),
// the load run's own API and two workers (fixtures/load.ts) completing N short jobs, then Redis's
// INFO memory against the empty server's. Completed jobs stay for EARMARK_RETENTION_HOURS with
// their index entries, results and cached report headlines: this is the steady cost per job kept.
// Usage: node bin/run.js bench/redis-sizing.ts [jobs=1000]

import { spawn } from 'node:child_process';
import { Redis } from 'ioredis';
import { freePort, portAnswers, sleep, waitFor } from '../fixtures/procs.ts';
import { formatLoad, runLoad } from '../fixtures/load.ts';

const jobs = Number(process.argv[2] ?? 1000);
const port = await freePort();
const server = spawn(
  'redis-server',
  ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'],
  {
    stdio: 'ignore',
  },
);
const redisUrl = `redis://127.0.0.1:${port}`;
const redis = new Redis(redisUrl, { lazyConnect: true, maxRetriesPerRequest: 1 });
redis.on('error', () => undefined);
try {
  await waitFor('redis-server', () => portAnswers(port), 10_000);
  await redis.connect();
  const usedBytes = async () => Number(/used_memory:(\d+)/.exec(await redis.info('memory'))?.[1] ?? Number.NaN);
  const before = await usedBytes();
  let after = Number.NaN;
  let keys = 0;
  const load = await runLoad({
    clients: 20,
    jobs,
    secondsPerFile: 1,
    boundSeconds: 900,
    redisUrl,
    afterJobs: async () => {
      await sleep(2000);
      after = await usedBytes();
      keys = await redis.dbsize();
    },
  });
  process.stdout.write(`${formatLoad(load)}\n`);
  const perThousandMib = (((after - before) / load.accepted) * 1000) / 2 ** 20;
  process.stdout.write(
    `redis used_memory ${(before / 2 ** 20).toFixed(1)} MiB empty, ${(after / 2 ** 20).toFixed(1)} MiB after ${load.accepted} completed jobs (${keys} keys): ${perThousandMib.toFixed(2)} MiB per 1,000 jobs kept\n`,
  );
} finally {
  redis.disconnect();
  server.kill('SIGTERM');
}
