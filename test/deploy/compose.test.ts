// The compose files cannot run here (no Docker): read them, and check what each service would get.
// Each of our services' environment, with the ${VAR:-default} and ${VAR:?message} forms filled
// in, must pass the one env schema (src/config), and Redis must run as BullMQ's production
// guidance asks: an append-only file and no eviction.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { loadConfig } from '../../src/config/index.ts';

interface Service {
  image?: string;
  build?: string;
  command?: string[];
  environment?: Record<string, string | number | boolean>;
  deploy?: { replicas?: number };
  depends_on?: Record<string, { condition: string }>;
}

const given: Record<string, string> = {
  EARMARK_API_KEYS: '[{"key":"compose-test-key-0123456789","tenant":"studio-a","scopes":["submit","read"]}]',
  S3_SECRET: 'compose-test-secret',
  EARMARK_REDIS_HOST: '10.0.0.5',
  EARMARK_OBJECTS_URL: 'http://10.0.0.5:9000',
};

/** Compose's variable forms: ${X}, ${X:-default}, ${X:?message}; $$ is a literal $. */
function fill(value: string): string {
  return value
    .replace(/\$\{(\w+)(?::-([^}]*)|:\?[^}]*)?\}/g, (_, name: string, fallback?: string) => {
      const v = given[name];
      if (v !== undefined) return v;
      if (fallback !== undefined) return fallback;
      throw new Error(`${name} is required and not given`);
    })
    .replace(/\$\$/g, '$');
}

function services(file: string): Record<string, Service> {
  const doc: { services: Record<string, Service> } = parse(readFileSync(file, 'utf8'), { merge: true });
  return doc.services;
}

const envOf = (service: Service): Record<string, string> =>
  Object.fromEntries(Object.entries(service.environment ?? {}).map(([k, v]) => [k, fill(String(v))]));

describe('docker-compose.yml', () => {
  const all = services('docker-compose.yml');

  it('runs Redis with an append-only file and noeviction', () => {
    const command = (all.redis.command ?? []).map(fill);
    expect(command[command.indexOf('--appendonly') + 1]).toBe('yes');
    expect(command[command.indexOf('--maxmemory-policy') + 1]).toBe('noeviction');
  });

  it('gives the API two replicas and both our services a valid configuration on the object store', () => {
    expect(all.api.deploy?.replicas).toBe(2);
    for (const name of ['api', 'worker']) {
      const config = loadConfig(envOf(all[name]));
      expect(config.redisUrl).toBe('redis://redis:6379');
      expect(config.storage).toMatchObject({ kind: 's3', bucket: 'earmark', prefix: 'media', forcePathStyle: true });
    }
    expect(all.api.command).toEqual(['node', 'bin/run.js', 'workers/api.ts']);
    expect(all.worker.command).toEqual(['node', 'bin/run.js', 'workers/worker.ts']);
  });

  it('starts the API and workers only once Redis is healthy and the bucket exists', () => {
    for (const name of ['api', 'worker']) {
      expect(all[name].depends_on?.redis.condition).toBe('service_healthy');
      expect(all[name].depends_on?.['objects-init'].condition).toBe('service_completed_successfully');
    }
  });
});

describe('docker-compose.worker-host.yml', () => {
  it('runs only workers, reaching Redis and the object store at the given addresses', () => {
    const all = services('docker-compose.worker-host.yml');
    expect(Object.keys(all)).toEqual(['worker']);
    const env = envOf(all.worker);
    expect(loadConfig(env).redisUrl).toBe('redis://10.0.0.5:6379');
    expect(loadConfig(env).storage).toMatchObject({ kind: 's3', bucket: 'earmark', prefix: 'media' });
    expect(env.AWS_ENDPOINT_URL_S3).toBe('http://10.0.0.5:9000');
  });
});
