// The S3 backend against a real S3-protocol server (s3rver on loopback, a bucket per run).
import { ListObjectsV2Command } from '@aws-sdk/client-s3';
import { createHash, randomBytes } from 'node:crypto';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { EarmarkError } from '../../src/errors/index.ts';
import { openStorage } from '../../src/storage/index.ts';
import { createS3Client, PART_SIZE_BYTES, S3Storage } from '../../src/storage/s3.ts';
import { startS3Server, type TestS3 } from '../helpers/s3-server.ts';

let s3: TestS3;
let storage: S3Storage;
let localDir: string;
const MIB = 1024 * 1024;

beforeAll(async () => {
  s3 = await startS3Server();
  localDir = mkdtempSync(join(tmpdir(), 'earmark-s3-local-'));
  const opened = await openStorage(s3.location('unit'), localDir, { copyLimitBytes: 32 * MIB });
  if (!(opened instanceof S3Storage)) throw new Error('expected the S3 backend');
  storage = opened;
  recordCommands(storage);
});

afterAll(async () => {
  storage?.client.destroy();
  await s3?.close();
  rmSync(localDir, { recursive: true, force: true });
});

const sha256 = (bytes: Buffer) => createHash('sha256').update(bytes).digest('hex');

/** A body sent in 64 KiB chunks, as a socket delivers it. */
function chunked(bytes: Buffer): Readable {
  let at = 0;
  return new Readable({
    read() {
      if (at >= bytes.length) return this.push(null);
      this.push(bytes.subarray(at, at + 64 * 1024));
      at += 64 * 1024;
    },
  });
}

async function keysUnder(folder: string): Promise<string[]> {
  const page = await storage.client.send(new ListObjectsV2Command({ Bucket: s3.bucket, Prefix: `unit/${folder}` }));
  return (page.Contents ?? []).map((item) => item.Key ?? '');
}

async function errorOf(promise: Promise<unknown>): Promise<EarmarkError> {
  const error = await promise.then(
    () => null,
    (e: unknown) => e,
  );
  if (!(error instanceof EarmarkError)) throw new Error(`expected an EarmarkError, got ${String(error)}`);
  return error;
}

/** The commands the backend's client sends, recorded by a middleware, with their UploadId. */
const sent: { command: string; uploadId?: string }[] = [];
function recordCommands(target: S3Storage): void {
  target.client.middlewareStack.add(
    (next, context) => async (args) => {
      const input = args.input as { UploadId?: string };
      sent.push({ command: context.commandName ?? '', ...(input.UploadId ? { uploadId: input.UploadId } : {}) });
      return next(args);
    },
    { step: 'initialize', name: 'recordCommands' },
  );
}

/** Every multipart upload that was started was aborted (s3rver answers the abort 405, see below). */
function multipartUploadsAborted(): void {
  const started = sent.filter((c) => c.command === 'UploadPartCommand').map((c) => c.uploadId);
  const aborted = sent.filter((c) => c.command === 'AbortMultipartUploadCommand').map((c) => c.uploadId);
  expect(started.length).toBeGreaterThan(0);
  expect(new Set(aborted)).toEqual(new Set(started));
}

describe('S3 storage', () => {
  it('streams an upload into a multipart upload, counting and hashing it; a local copy is the same bytes', async () => {
    const bytes = randomBytes(2 * PART_SIZE_BYTES + 12_345);
    const stored = await storage.saveUpload(chunked(bytes), 64 * MIB);
    expect(stored.sizeBytes).toBe(bytes.length);
    expect(stored.sha256).toBe(sha256(bytes));
    expect(await keysUnder('uploads/')).toEqual([`unit/${stored.key}`]);
    const copy = await storage.localCopy(stored.key);
    expect(copy.path.startsWith(localDir)).toBe(true);
    expect(copy.sha256).toBe(stored.sha256);
    expect(sha256(readFileSync(copy.path))).toBe(stored.sha256);
    await copy.release();
    expect(existsSync(copy.path)).toBe(false);
    await storage.remove(stored.key);
    expect(await keysUnder('uploads/')).toEqual([]);
  });

  it('a small upload goes up as one object of exactly the bytes sent', async () => {
    const bytes = randomBytes(1000);
    const stored = await storage.saveUpload(chunked(bytes), MIB);
    const copy = await storage.localCopy(stored.key);
    // The SDK's default trailing checksums once stored a streamed body 44 bytes longer.
    expect(readFileSync(copy.path)).toEqual(bytes);
    await copy.release();
    await storage.remove(stored.key);
  });

  it('an empty upload is an empty object', async () => {
    const stored = await storage.saveUpload(chunked(Buffer.alloc(0)), MIB);
    expect(stored).toMatchObject({ sizeBytes: 0, sha256: sha256(Buffer.alloc(0)) });
    expect(await storage.sizeOf(stored.key)).toBe(0);
    await storage.remove(stored.key);
    expect(await storage.sizeOf(stored.key)).toBeNull();
  });

  it('over the limit: payload_too_large, the multipart upload aborted, no object left', async () => {
    sent.length = 0;
    const error = await errorOf(storage.saveUpload(chunked(randomBytes(3 * PART_SIZE_BYTES)), 2 * PART_SIZE_BYTES));
    expect(error.code).toBe('payload_too_large');
    expect(await keysUnder('uploads/')).toEqual([]);
    // s3rver 3.7 answers AbortMultipartUpload with 405 MethodNotAllowed and keeps the parts in its
    // folder, so the test checks that the abort was sent; S3 itself removes the parts on it.
    multipartUploadsAborted();
  });

  it('a client that goes away mid-upload: validation_failed, the multipart upload aborted, no object left', async () => {
    sent.length = 0;
    let sentBytes = 0;
    const source = new Readable({
      read() {
        if (sentBytes >= PART_SIZE_BYTES + MIB) {
          this.destroy();
          return;
        }
        sentBytes += 64 * 1024;
        this.push(randomBytes(64 * 1024));
      },
    });
    const error = await errorOf(storage.saveUpload(source, 64 * MIB));
    expect(error.code).toBe('validation_failed');
    expect(await keysUnder('uploads/')).toEqual([]);
    multipartUploadsAborted();
  });

  it('a truncated multipart body (the form parser saw the limit) keeps nothing', async () => {
    const error = await errorOf(storage.saveUpload(chunked(randomBytes(1000)), MIB, () => true));
    expect(error.code).toBe('payload_too_large');
    expect(await keysUnder('uploads/')).toEqual([]);
  });

  it('reports round trip; a missing report reads null', async () => {
    const key = await storage.writeReport('job-1', '{"verdict":"pass"}');
    expect(key).toBe('reports/job-1.json');
    expect(await storage.readReport('job-1')).toBe('{"verdict":"pass"}');
    expect(await storage.readReport('job-404')).toBeNull();
    await storage.remove(key);
  });

  it('a local copy over the copy limit is refused before any byte is fetched; a missing object is file_not_found', async () => {
    const stored = await storage.saveUpload(chunked(randomBytes(33 * MIB)), 64 * MIB);
    expect((await errorOf(storage.localCopy(stored.key))).code).toBe('payload_too_large');
    expect(readdirSync(join(localDir, 'copies'))).toEqual([]);
    await storage.remove(stored.key);
    expect((await errorOf(storage.localCopy(stored.key))).code).toBe('file_not_found');
  });

  it('the retention sweep deletes objects last modified before maxAge and keeps newer ones', async () => {
    await storage.writeReport('old', '{}');
    const old = await storage.saveUpload(chunked(randomBytes(100)), MIB);
    // S3 reports LastModified to the second.
    await new Promise((resolve) => setTimeout(resolve, 2_200));
    await storage.writeReport('new', '{}');
    expect(await storage.sweep(60_000)).toEqual({ keys: [], tempFiles: 0 });
    expect((await storage.sweep(1_500)).keys.sort()).toEqual(['reports/old.json', old.key].sort());
    expect(await keysUnder('uploads/')).not.toContain(`unit/${old.key}`);
    expect(await storage.readReport('old')).toBeNull();
    expect(await storage.readReport('new')).toBe('{}');
    await storage.remove('reports/new.json');
  });

  it("sweepPartials removes a killed process's short-lived copies, never an analysis's", async () => {
    const stored = await storage.saveUpload(chunked(randomBytes(1000)), MIB);
    const analysis = await storage.localCopy(stored.key);
    const excerpts = new S3Storage(storage.client, s3.location('unit'), localDir, { shortLivedCopies: true });
    await excerpts.init();
    const excerpt = await excerpts.localCopy(stored.key);
    expect(await excerpts.sweepPartials(60_000)).toBe(0);
    expect(await excerpts.sweepPartials(-1)).toBe(1);
    expect(existsSync(excerpt.path)).toBe(false);
    expect(existsSync(analysis.path)).toBe(true);
    await analysis.release();
    await storage.remove(stored.key);
  });

  it('checkWritable is true for the bucket and false for a bucket that does not exist', async () => {
    expect(await storage.checkWritable()).toBe(true);
    const missing = { ...s3.location('unit'), bucket: 'earmark-no-such-bucket' };
    const elsewhere = new S3Storage(createS3Client(missing), missing, localDir);
    expect(await elsewhere.checkWritable()).toBe(false);
    elsewhere.client.destroy();
  });
});
