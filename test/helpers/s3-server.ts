// An S3-protocol server for tests: s3rver (npm) on a free loopback port, its data in a temp folder,
// with a fresh bucket per run. It checks request signatures against its fixed test credentials,
// which the SDK's chain reads from the environment (the worker's sandboxed children inherit them).
import { CreateBucketCommand, PutObjectCommand } from '@aws-sdk/client-s3';
import { randomBytes } from 'node:crypto';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import S3rver from 's3rver';
import type { StorageLocation } from '../../src/config/index.ts';
import { createS3Client } from '../../src/storage/s3.ts';

export type S3Location = Extract<StorageLocation, { kind: 's3' }>;

export interface TestS3 {
  endpoint: string;
  bucket: string;
  /** The bucket at a prefix, as the configuration reads it. */
  location(prefix?: string): S3Location;
  /** The service's environment for this bucket (EARMARK_STORAGE_URL and the SDK's variables). */
  env(prefix?: string): Record<string, string>;
  /** Another bucket on the same server, with one object in it (for s3:// sourceUrls). */
  bucketWith(name: string, key: string, body: Buffer): Promise<void>;
  /** The folder s3rver keeps its objects and multipart parts in. */
  directory: string;
  close(): Promise<void>;
}

export async function startS3Server(): Promise<TestS3> {
  process.env.AWS_ACCESS_KEY_ID = 'S3RVER';
  process.env.AWS_SECRET_ACCESS_KEY = 'S3RVER';
  const directory = mkdtempSync(join(tmpdir(), 'earmark-s3rver-'));
  const server = new S3rver({ address: '127.0.0.1', port: 0, silent: true, directory });
  const { port } = await server.run();
  const endpoint = `http://127.0.0.1:${port}`;
  const bucket = `earmark-${randomBytes(6).toString('hex')}`;
  const location = (prefix = 'run'): S3Location => ({
    kind: 's3',
    bucket,
    prefix,
    endpoint,
    region: 'us-east-1',
    forcePathStyle: true,
    sourceBuckets: [],
  });
  const client = createS3Client(location());
  await client.send(new CreateBucketCommand({ Bucket: bucket }));
  client.destroy();
  return {
    endpoint,
    bucket,
    directory,
    location,
    env: (prefix = 'run') => ({
      EARMARK_STORAGE_URL: `s3://${bucket}/${prefix}`,
      AWS_ENDPOINT_URL_S3: endpoint,
      AWS_REGION: 'us-east-1',
      EARMARK_S3_FORCE_PATH_STYLE: 'true',
    }),
    async bucketWith(name, key, body) {
      const other = createS3Client(location());
      try {
        await other.send(new CreateBucketCommand({ Bucket: name }));
        await other.send(new PutObjectCommand({ Bucket: name, Key: key, Body: body }));
      } finally {
        other.destroy();
      }
    },
    async close() {
      // Kept-alive SDK sockets would hold close() open.
      server.httpServer?.closeAllConnections();
      await server.close();
      rmSync(directory, { recursive: true, force: true });
    },
  };
}
