// The environment schema: defaults, and a bad value names its variable.
import { availableParallelism } from 'node:os';
import { describe, expect, it } from 'vitest';
import { ConfigError, loadConfig } from '../../src/config/index.ts';

const keys = JSON.stringify([{ key: 'k-0123456789abcdef', tenant: 't1', scopes: ['read'] }]);

describe('loadConfig', () => {
  it('has the documented defaults', () => {
    const c = loadConfig({});
    expect(c).toMatchObject({
      port: 8080,
      redisUrl: 'redis://127.0.0.1:6379',
      redisUrlExplicit: false,
      // One job per core, and a job alone may use every core (worker/thread-policy.ts).
      workerConcurrency: availableParallelism(),
      analysisThreads: availableParallelism(),
      retentionHours: 24,
      uploadLimitBytes: 2 * 1024 ** 3,
      apiKeys: [],
    });
    expect(loadConfig({ REDIS_URL: 'redis://cache:6380' }).redisUrlExplicit).toBe(true);
    expect(loadConfig({ EARMARK_API_KEYS: keys }).apiKeys).toEqual([
      { key: 'k-0123456789abcdef', tenant: 't1', scopes: ['read'] },
    ]);
  });

  it.each([
    ['PORT', 'eighty'],
    ['PORT', '70000'],
    ['REDIS_URL', 'http://localhost'],
    ['EARMARK_API_KEYS', '{not json'],
    ['EARMARK_API_KEYS', JSON.stringify([{ key: 'short', tenant: 't', scopes: ['read'] }])],
    ['EARMARK_API_KEYS', JSON.stringify([{ key: 'k-0123456789abcdef', tenant: 't', scopes: ['root'] }])],
    ['EARMARK_WORKER_CONCURRENCY', '0'],
    ['EARMARK_ANALYSIS_THREADS', '0'],
    ['EARMARK_UPLOAD_LIMIT_BYTES', '-5'],
    ['EARMARK_WEBHOOK_SECRETS', JSON.stringify({ t: 'short' })],
    ['EARMARK_LOG_LEVEL', 'loud'],
  ])('%s=%s stops start-up with a message naming it', (name, value) => {
    let thrown: unknown;
    try {
      loadConfig({ [name]: value });
    } catch (error) {
      thrown = error;
    }
    expect(thrown).toBeInstanceOf(ConfigError);
    expect((thrown as ConfigError).variable).toBe(name);
    expect((thrown as Error).message.startsWith(`${name}:`)).toBe(true);
    // The message never echoes a key.
    expect((thrown as Error).message).not.toContain('k-0123456789abcdef');
  });
});
