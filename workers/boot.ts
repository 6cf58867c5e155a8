// Shared by the entrypoints: config (exit naming the bad variable), logger, Redis choice, and
// a SIGTERM/SIGINT handler that runs the closers once, then exits.

import pino, { type Logger } from 'pino';
import { ConfigError, loadConfig, type Config } from '../src/config/index.ts';
import { ensureRedis } from '../src/queue/local-redis.ts';

export async function boot(role: string): Promise<{ config: Config; log: Logger; stopRedis: () => void }> {
  let config: Config;
  try {
    config = loadConfig();
  } catch (error) {
    process.stderr.write(
      `earmark ${role}: configuration error: ${error instanceof ConfigError ? error.message : 'unreadable environment'}\n`,
    );
    process.exit(2);
  }
  const log = pino({ level: config.logLevel, base: { pid: process.pid, process: role } });
  try {
    const redis = await ensureRedis(config.redisUrl, config.redisUrlExplicit);
    if (redis.message) log.warn(redis.message);
    config = { ...config, redisUrl: redis.url, redisUrlExplicit: true };
    if (config.apiKeys.length === 0 && role !== 'worker')
      log.warn('EARMARK_API_KEYS is empty: every /v1 request will be refused');
    return { config, log, stopRedis: () => redis.child?.kill() };
  } catch (error) {
    log.fatal((error as Error).message);
    process.exit(2);
  }
}

export function onShutdown(log: Logger, close: () => Promise<void>): void {
  let closing = false;
  const handler = (signal: string) => {
    if (closing) return;
    closing = true;
    log.info({ signal }, 'shutting down');
    close().then(
      () => process.exit(0),
      (error: unknown) => {
        log.error({ err: { message: (error as Error).message } }, 'shutdown failed');
        process.exit(1);
      },
    );
  };
  process.on('SIGTERM', () => handler('SIGTERM'));
  process.on('SIGINT', () => handler('SIGINT'));
}
