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
      packageWaitMs: 6 * 3_600_000,
      uploadLimitBytes: 2 * 1024 ** 3,
      apiKeys: [],
    });
    expect(loadConfig({ REDIS_URL: 'redis://cache:6380' }).redisUrlExplicit).toBe(true);
    expect(loadConfig({ EARMARK_API_KEYS: keys }).apiKeys).toEqual([
      { key: 'k-0123456789abcdef', tenant: 't1', scopes: ['read'] },
    ]);
  });

  it('reads the storage backend from EARMARK_STORAGE_URL; EARMARK_STORAGE_DIR alone is the file backend', () => {
    expect(loadConfig({ EARMARK_STORAGE_DIR: '/srv/earmark' })).toMatchObject({
      storage: { kind: 'file', dir: '/srv/earmark' },
      storageDir: '/srv/earmark',
    });
    expect(loadConfig({ EARMARK_STORAGE_URL: 'file:///srv/media' }).storage).toEqual({
      kind: 'file',
      dir: '/srv/media',
    });
    const s3 = loadConfig({
      EARMARK_STORAGE_URL: 's3://media-bucket/earmark/prod/',
      EARMARK_STORAGE_DIR: '/var/tmp/earmark',
      AWS_ENDPOINT_URL: 'http://store.internal:9000',
      AWS_REGION: 'eu-central-1',
      EARMARK_S3_FORCE_PATH_STYLE: 'true',
    });
    expect(s3.storage).toEqual({
      kind: 's3',
      bucket: 'media-bucket',
      prefix: 'earmark/prod',
      endpoint: 'http://store.internal:9000',
      region: 'eu-central-1',
      forcePathStyle: true,
      sourceBuckets: [],
    });
    // With S3, the folder is this host's own, for temp copies.
    expect(s3.storageDir).toBe('/var/tmp/earmark');
    // The S3-specific endpoint wins over the general one, as in the SDK.
    expect(
      loadConfig({
        EARMARK_STORAGE_URL: 's3://media-bucket',
        AWS_ENDPOINT_URL: 'http://a:1',
        AWS_ENDPOINT_URL_S3: 'http://b:2',
      }).storage,
    ).toMatchObject({ prefix: '', endpoint: 'http://b:2', region: 'us-east-1', forcePathStyle: false });
    expect(() => loadConfig({ EARMARK_STORAGE_URL: 'file:///a', EARMARK_STORAGE_DIR: '/b' })).toThrow(
      /EARMARK_STORAGE_URL: names another folder/,
    );
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
    ['EARMARK_STORAGE_URL', 'ftp://host/x'],
    ['EARMARK_STORAGE_URL', 's3://Bad_Bucket/x'],
    ['EARMARK_STORAGE_URL', 's3://media-bucket/a b'],
    ['EARMARK_STORAGE_URL', 'not a url'],
    ['EARMARK_S3_FORCE_PATH_STYLE', 'yes'],
    ['EARMARK_S3_SOURCE_BUCKETS', 'ok-bucket,Not_A_Bucket'],
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
