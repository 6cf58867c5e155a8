// The sandboxed child checks the settings the worker passes it with the environment schema's own bounds.
import { describe, expect, it } from 'vitest';
import { parseChildSettings } from '../../src/worker/child-settings.ts';

const good = {
  storageDir: '/srv/earmark',
  urlAllowlist: ['media.example.test', '10.0.0.0/8'],
  fetchLimitBytes: 1000,
  fetchTimeoutMs: 5000,
  childRssLimitMb: 256,
  maxDecodedSeconds: 3600,
  fetchDeadlineMs: 60000,
};
// What the child derives: the file backend at storageDir, the schema's default upload limit.
const derived = { storage: { kind: 'file', dir: '/srv/earmark' }, uploadLimitBytes: 2 * 1024 ** 3 };
const parse = (value: unknown, inherited = {}) => parseChildSettings(JSON.stringify(value), inherited);

describe('child settings', () => {
  it('reads what the worker passes', () => {
    expect(parse(good)).toEqual({ ...good, ...derived });
  });

  it('takes absent optional settings from the inherited environment, else the schema defaults', () => {
    const { childRssLimitMb: _r, maxDecodedSeconds: _m, fetchDeadlineMs: _f, ...required } = good;
    expect(parse(required, { EARMARK_CHILD_RSS_LIMIT_MB: '128' })).toEqual({
      ...required,
      ...derived,
      childRssLimitMb: 128,
      maxDecodedSeconds: 86_400,
      fetchDeadlineMs: 600_000,
    });
  });

  it('reads the object-store backend the worker passes', () => {
    const s3 = {
      sourceBuckets: ['ingest-drop'],
      url: 's3://media-bucket/earmark',
      endpoint: 'http://127.0.0.1:9000',
      region: 'eu-west-1',
      forcePathStyle: true,
    };
    expect(parse({ ...good, s3 }).storage).toEqual({
      kind: 's3',
      bucket: 'media-bucket',
      prefix: 'earmark',
      endpoint: 'http://127.0.0.1:9000',
      region: 'eu-west-1',
      forcePathStyle: true,
      sourceBuckets: ['ingest-drop'],
    });
  });

  it.each([
    ['missing', undefined, /is missing/],
    ['not JSON', '{', /not valid JSON/],
    ['not an object', '[1]', /must be a JSON object/],
  ])('refuses settings that are %s', (_, raw, message) => {
    expect(() => parseChildSettings(raw, {})).toThrow(message);
  });

  it.each([
    ['a relative storageDir', { storageDir: 'data' }, /storageDir must be an absolute path/],
    ['an allowlist that is not a list', { urlAllowlist: 'a,b' }, /urlAllowlist/],
    ['a missing fetchTimeoutMs', { fetchTimeoutMs: undefined }, /fetchTimeoutMs must be a whole number/],
    ['a fetchTimeoutMs below the schema minimum', { fetchTimeoutMs: 5 }, /fetchTimeoutMs must be between 100/],
    ['a fractional maxDecodedSeconds', { maxDecodedSeconds: 1.5 }, /maxDecodedSeconds must be a whole number/],
    ['a string childRssLimitMb', { childRssLimitMb: '512' }, /childRssLimitMb must be a whole number/],
    ['an unknown setting', { redisUrl: 'redis://x' }, /redisUrl is not a known setting/],
  ])('refuses %s, naming it', (_, change, message) => {
    let thrown: unknown;
    try {
      parse({ ...good, ...change });
    } catch (e) {
      thrown = e;
    }
    expect(thrown).toMatchObject({ name: 'ConfigError', variable: 'EARMARK_CHILD_SETTINGS' });
    expect(String(thrown)).toMatch(message);
  });
});
