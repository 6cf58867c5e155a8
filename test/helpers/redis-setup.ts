// Vitest globalSetup: finds or starts the Redis the tests use, and passes its URL to them
// (testRedisUrl() in redis.ts). With REDIS_URL set, that Redis must answer. Otherwise a private
// redis-server on a free loopback port, without persistence, lives for this run only, so tests
// never share data with, or depend on, a Redis someone else runs.

import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import type { TestProject } from 'vitest/node';
import { answers, freePort } from '../../src/queue/local-redis.ts';
import type { TestRedis } from './redis.ts';

const START_BOUND_MS = 10_000;

function exited(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return Promise.resolve();
  return new Promise((resolve) => child.once('exit', () => resolve()));
}

async function startPrivate(): Promise<{ url: string; child: ChildProcess }> {
  // A port freed by freePort can be taken before redis-server binds it: then try another.
  for (let attempt = 0; attempt < 3; attempt++) {
    const port = await freePort();
    const args = ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'];
    const child = spawn('redis-server', args, { stdio: 'ignore' });
    let gone = false;
    child.once('error', () => {
      gone = true;
    });
    child.once('exit', () => {
      gone = true;
    });
    const end = Date.now() + START_BOUND_MS;
    while (!gone && Date.now() < end) {
      if (await answers('127.0.0.1', port)) return { url: `redis://127.0.0.1:${port}`, child };
      await new Promise((resolve) => setTimeout(resolve, 50));
    }
    // Without a pid the spawn itself failed, and there is no process to wait for.
    if (child.pid !== undefined) {
      child.kill('SIGKILL');
      await exited(child);
    }
  }
  throw new Error('a private redis-server was started three times but never answered');
}

async function choose(): Promise<{ redis: TestRedis; child: ChildProcess | null }> {
  const given = process.env.REDIS_URL;
  if (given) {
    if (!URL.canParse(given)) throw new Error(`REDIS_URL is ${given}, which is not a URL (redis://host:port)`);
    const url = new URL(given);
    const port = Number(url.port || 6379);
    if (!(await answers(url.hostname, port))) {
      throw new Error(
        `REDIS_URL is ${given}, but nothing answers at ${url.hostname}:${port}: start Redis there, or unset REDIS_URL to let the tests start their own`,
      );
    }
    return { redis: { url: given }, child: null };
  }
  if (spawnSync('redis-server', ['--version'], { stdio: 'ignore' }).status !== 0) {
    const problem =
      'redis-server is not on PATH, and REDIS_URL is not set: apt-get install -y redis-server (the tests start their own), or set REDIS_URL';
    // Off CI only the tests that need Redis fail, with this reason; the rest still run.
    if (process.env.CI === 'true') throw new Error(problem);
    return { redis: { problem }, child: null };
  }
  const { url, child } = await startPrivate();
  return { redis: { url }, child };
}

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const { redis, child } = await choose();
  project.provide('testRedis', redis);
  return async () => {
    if (child === null) return;
    child.kill('SIGTERM');
    await exited(child);
  };
}
