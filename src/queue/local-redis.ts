// For `npm start` on a developer machine: when nothing answers at the default REDIS_URL, start
// a private redis-server for this run (no persistence) if one is on PATH. Never an in-memory
// imitation: the service's behaviour depends on real Redis semantics.

import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { createServer, Socket } from 'node:net';

/** Whether something accepts a TCP connection there within a second. */
export function answers(host: string, port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = new Socket();
    const done = (ok: boolean) => {
      socket.destroy();
      resolve(ok);
    };
    socket.setTimeout(1_000, () => done(false));
    socket.once('error', () => done(false));
    socket.connect(port, host, () => done(true));
  });
}

/** A loopback port free at the moment of asking. */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      const port = typeof address === 'object' && address !== null ? address.port : 0;
      server.close(() => (port > 0 ? resolve(port) : reject(new Error('no free port'))));
    });
  });
}

export interface RedisChoice {
  url: string;
  child: ChildProcess | null;
  message: string | null;
}

export async function ensureRedis(url: string, explicit: boolean): Promise<RedisChoice> {
  const parsed = new URL(url);
  if (await answers(parsed.hostname, Number(parsed.port || 6379))) return { url, child: null, message: null };
  if (explicit)
    throw new Error(
      `nothing answers at REDIS_URL (${parsed.hostname}:${parsed.port || 6379}); start Redis there or fix REDIS_URL`,
    );
  if (spawnSync('redis-server', ['--version'], { stdio: 'ignore' }).status !== 0) {
    throw new Error(
      'nothing answers at redis://127.0.0.1:6379 and redis-server is not on PATH: install Redis (e.g. apt-get install redis-server) or set REDIS_URL',
    );
  }
  const port = await freePort();
  const child = spawn(
    'redis-server',
    ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'],
    { stdio: 'ignore' },
  );
  for (let i = 0; i < 50 && !(await answers('127.0.0.1', port)); i++) await new Promise((r) => setTimeout(r, 100));
  if (!(await answers('127.0.0.1', port))) {
    child.kill();
    throw new Error('a private redis-server was started but does not answer');
  }
  return {
    url: `redis://127.0.0.1:${port}`,
    child,
    message: `no Redis at ${url}: started a private redis-server on port ${port} for this run (data is not kept)`,
  };
}
