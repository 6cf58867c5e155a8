// The S3-compatible object-storage backend (AWS SDK v3). Uploads stream into a multipart upload
// with a bounded part size and queue, so an upload holds at most (queue + 1) parts in memory
// whatever the file's size; the bytes are counted and hashed as they pass, and a failed or
// abandoned upload aborts the multipart upload, so nothing is kept.
//
// The decoders read a file with random access and synchronous reads (chunk tables, seeks for
// excerpts), which an object store's ranged GETs cannot serve. localCopy therefore downloads the
// object to a temp file on this host, bounded by copyLimitBytes (checked from HEAD before any byte
// is fetched), and the caller releases it after the job. An excerpt of a PCM file fetches only
// the bytes its decode reads (excerptCopy, sparse-excerpt.ts).
import {
  DeleteObjectCommand,
  GetObjectCommand,
  HeadBucketCommand,
  HeadObjectCommand,
  ListObjectsV2Command,
  PutObjectCommand,
  S3Client,
} from '@aws-sdk/client-s3';
import { Upload } from '@aws-sdk/lib-storage';
import { createHash, randomUUID } from 'node:crypto';
import { mkdir, open, rm } from 'node:fs/promises';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import type { StorageLocation } from '../config/index.ts';
import { EarmarkError } from '../errors/index.ts';
import { writeChunksToNewFile } from './block-file-writer.ts';
import { sweepDirs } from './local.ts';
import { receiveUpload } from './receive.ts';
import { type ExcerptPlan, HEAD_BYTES, planExcerpt } from './sparse-excerpt.ts';
import {
  KEY,
  type LocalCopy,
  type PresignedUpload,
  type Storage,
  type StorageOptions,
  type StoredFile,
  type Swept,
} from './types.ts';

/** S3's smallest part is 5 MiB; 8 MiB parts, two in flight, keep an upload near 24 MiB of buffers. */
export const PART_SIZE_BYTES = 8 * 1024 * 1024;
export const QUEUE_SIZE = 2;
/** Temp copies for analyses (they live as long as a job) and for excerpts (seconds). */
const COPIES = 'copies';
const SHORT_COPIES = 'short-copies';

type S3Location = Extract<StorageLocation, { kind: 's3' }>;

/** Endpoint and region from the configuration (the SDK's own variables); credentials from the SDK's chain. */
export function createS3Client(location: S3Location): S3Client {
  return new S3Client({
    ...(location.endpoint ? { endpoint: location.endpoint } : {}),
    region: location.region,
    forcePathStyle: location.forcePathStyle,
    // The SDK's default adds trailing checksums to streamed bodies; some S3-compatible servers
    // then store the framing with the object (a plain streamed PutObject came out 44 bytes longer).
    requestChecksumCalculation: 'WHEN_REQUIRED',
    responseChecksumValidation: 'WHEN_REQUIRED',
  });
}

const statusOf = (error: unknown): number | undefined =>
  (error as { $metadata?: { httpStatusCode?: number } } | null)?.$metadata?.httpStatusCode;

const unavailable = (message: string, cause: unknown) =>
  new EarmarkError('storage_unavailable', message, {}, { cause });

export class S3Storage implements Storage {
  readonly kind = 's3';
  readonly bucket: string;
  private readonly prefix: string;
  private readonly copyLimitBytes: number;
  private readonly sourceBuckets: ReadonlySet<string>;
  private readonly copiesFolder: string;

  constructor(
    readonly client: S3Client,
    location: S3Location,
    /** This host's folder for temp copies (never shared with other hosts). */
    readonly localDir: string,
    options: StorageOptions = {},
  ) {
    this.bucket = location.bucket;
    this.prefix = location.prefix ? `${location.prefix}/` : '';
    this.copyLimitBytes = options.copyLimitBytes ?? Number.MAX_SAFE_INTEGER;
    this.sourceBuckets = new Set(location.sourceBuckets);
    this.copiesFolder = options.shortLivedCopies ? SHORT_COPIES : COPIES;
  }

  async init(): Promise<this> {
    await mkdir(join(this.localDir, this.copiesFolder), { recursive: true });
    return this;
  }

  objectKey(key: string): string {
    if (!KEY.test(key)) throw new EarmarkError('invalid_argument', 'malformed storage key');
    return this.prefix + key;
  }

  async saveUpload(source: Readable, limitBytes: number, isTruncated?: () => boolean): Promise<StoredFile> {
    const key = `uploads/${randomUUID()}`;
    const Key = this.objectKey(key);
    const received = await receiveUpload(source, limitBytes, isTruncated, {
      // A failed read of the body aborts the multipart upload (leavePartsOnError false) before done() rejects.
      write: (chunks) =>
        new Upload({
          client: this.client,
          params: { Bucket: this.bucket, Key, Body: Readable.from(chunks, { objectMode: false }) },
          partSize: PART_SIZE_BYTES,
          queueSize: QUEUE_SIZE,
          leavePartsOnError: false,
        })
          .done()
          .then(() => undefined),
      commit: async () => undefined,
      // A body that fitted one part went up as one PutObject, complete before a late truncation was seen.
      discard: () => this.client.send(new DeleteObjectCommand({ Bucket: this.bucket, Key })).then(() => undefined),
    });
    return { key, ...received };
  }

  /** Content-Length is signed, so the store refuses a body of any other size: the upload limit
   * holds without the API seeing a byte. The checksum settings of createS3Client keep the SDK from
   * adding checksum parameters a plain PUT could not match. */
  async presignUpload(sizeBytes: number, expiresSeconds: number): Promise<PresignedUpload> {
    const { getSignedUrl } = await import('@aws-sdk/s3-request-presigner');
    const key = `uploads/${randomUUID()}`;
    const command = new PutObjectCommand({ Bucket: this.bucket, Key: this.objectKey(key), ContentLength: sizeBytes });
    const url = await getSignedUrl(this.client, command, {
      expiresIn: expiresSeconds,
      signableHeaders: new Set(['content-length']),
    });
    return {
      key,
      url,
      headers: { 'content-length': String(sizeBytes) },
      expiresAt: new Date(Date.now() + expiresSeconds * 1000),
    };
  }

  async sizeOf(key: string): Promise<number | null> {
    try {
      const head = await this.client.send(new HeadObjectCommand({ Bucket: this.bucket, Key: this.objectKey(key) }));
      return head.ContentLength ?? 0;
    } catch (error) {
      if (statusOf(error) === 404) return null;
      throw unavailable('storage could not be asked for the upload', error);
    }
  }

  localCopy(key: string): Promise<LocalCopy> {
    return this.copyObject(this.bucket, this.objectKey(key), this.copyLimitBytes);
  }

  /** Only the bytes an excerpt of a PCM file reads (sparse-excerpt.ts), into a sparse file of the
   * object's size; anything else, or any doubt, is the whole copy. */
  async excerptCopy(key: string, startSeconds: number, endSeconds: number): Promise<LocalCopy> {
    const Key = this.objectKey(key);
    const path = join(this.localDir, this.copiesFolder, randomUUID());
    try {
      const sparse = await this.sparseExcerpt(Key, path, startSeconds, endSeconds);
      if (sparse) return sparse;
    } catch (error) {
      if (error instanceof EarmarkError) throw error;
      // An object replaced between the reads (IfMatch) or a short range: the whole copy decides.
    }
    await rm(path, { force: true }).catch(() => undefined);
    return this.copyObject(this.bucket, Key, this.copyLimitBytes);
  }

  private async sparseExcerpt(
    Key: string,
    path: string,
    startSeconds: number,
    endSeconds: number,
  ): Promise<LocalCopy | null> {
    let head: { ContentLength?: number; ETag?: string };
    try {
      head = await this.client.send(new HeadObjectCommand({ Bucket: this.bucket, Key }));
    } catch (error) {
      if (statusOf(error) === 404) throw new EarmarkError('file_not_found', 'the stored audio is gone');
      throw unavailable('the stored audio could not be read', error);
    }
    const sizeBytes = head.ContentLength ?? 0;
    const etag = head.ETag;
    if (!etag) return null;
    let headBytes: Uint8Array = new Uint8Array(0);
    let plan: ExcerptPlan = { kind: 'more_head' };
    for (const wanted of HEAD_BYTES) {
      if (wanted >= sizeBytes) return null;
      headBytes = await this.getRange(Key, etag, 0, wanted);
      plan = await planExcerpt(headBytes, sizeBytes, startSeconds, endSeconds);
      if (plan.kind !== 'more_head') break;
    }
    if (plan.kind !== 'ranges') return null;
    const file = await open(path, 'wx');
    let fetchedBytes = headBytes.length;
    try {
      await file.truncate(sizeBytes);
      await file.write(headBytes, 0, headBytes.length, 0);
      for (const [from, to] of plan.ranges) {
        const bytes = await this.getRange(Key, etag, from, to);
        await file.write(bytes, 0, bytes.length, from);
        fetchedBytes += bytes.length;
      }
    } finally {
      await file.close();
    }
    return { path, sha256: null, fetchedBytes, release: () => rm(path, { force: true }) };
  }

  /** Bytes [from, to) of the object as it was at HEAD; anything else throws. */
  private async getRange(Key: string, etag: string, from: number, to: number): Promise<Uint8Array> {
    const got = await this.client.send(
      new GetObjectCommand({ Bucket: this.bucket, Key, IfMatch: etag, Range: `bytes=${from}-${to - 1}` }),
    );
    const bytes = await got.Body?.transformToByteArray();
    if (!bytes || bytes.length !== to - from || !got.ContentRange?.startsWith(`bytes ${from}-${to - 1}/`))
      throw new Error(`the object store did not send bytes ${from}-${to - 1}`);
    return bytes;
  }

  checkSource(url: string): { bucket: string; key: string } {
    const refused = (why: string) => new EarmarkError('source_refused', why, { field: 'sourceUrl' });
    let parsed: URL;
    try {
      parsed = new URL(url);
    } catch {
      throw refused('sourceUrl is not a URL');
    }
    const bucket = parsed.hostname;
    if (parsed.protocol !== 's3:' || !this.sourceBuckets.has(bucket))
      throw refused('sourceUrl names a bucket this service may not read (EARMARK_S3_SOURCE_BUCKETS)');
    let key: string;
    try {
      key = decodeURIComponent(parsed.pathname.replace(/^\//, ''));
    } catch {
      throw refused('sourceUrl has a malformed percent escape in its path');
    }
    if (!key || parsed.search || parsed.hash || parsed.username || parsed.port)
      throw refused('an s3:// sourceUrl is s3://bucket/key, nothing more');
    return { bucket, key };
  }

  copySource(url: string, limitBytes: number): Promise<LocalCopy> {
    const { bucket, key } = this.checkSource(url);
    return this.copyObject(bucket, key, limitBytes);
  }

  private async copyObject(bucket: string, Key: string, limitBytes: number): Promise<LocalCopy> {
    let head: { ContentLength?: number; ETag?: string };
    try {
      head = await this.client.send(new HeadObjectCommand({ Bucket: bucket, Key }));
    } catch (error) {
      if (statusOf(error) === 404) throw new EarmarkError('file_not_found', 'the stored audio is gone');
      throw unavailable('the stored audio could not be read', error);
    }
    const sizeBytes = head.ContentLength ?? 0;
    if (sizeBytes > limitBytes)
      throw new EarmarkError('payload_too_large', `the stored audio is larger than ${limitBytes} bytes`, {
        limitBytes,
      });
    const path = join(this.localDir, this.copiesFolder, randomUUID());
    const hash = createHash('sha256');
    try {
      const got = await this.client.send(
        new GetObjectCommand({ Bucket: bucket, Key, ...(head.ETag ? { IfMatch: head.ETag } : {}) }),
      );
      if (!(got.Body instanceof Readable)) throw new Error('the object store sent no body stream');
      const body = got.Body;
      let copiedBytes = 0;
      // An object replaced since HEAD (and IfMatch not honoured) must not grow past the bound.
      const counted = async function* () {
        for await (const chunk of body as AsyncIterable<Buffer>) {
          copiedBytes += chunk.length;
          if (copiedBytes > sizeBytes) throw new Error('the object grew while it was copied');
          hash.update(chunk);
          yield chunk;
        }
      };
      await writeChunksToNewFile(path, counted());
      if (copiedBytes !== sizeBytes) throw new Error('the object ended early');
    } catch (error) {
      await rm(path, { force: true }).catch(() => undefined);
      if (statusOf(error) === 404) throw new EarmarkError('file_not_found', 'the stored audio is gone');
      throw unavailable('the stored audio could not be copied', error);
    }
    return { path, sha256: hash.digest('hex'), release: () => rm(path, { force: true }) };
  }

  async writeReport(jobId: string, json: string): Promise<string> {
    const key = `reports/${jobId}.json`;
    // One PutObject is atomic: a reader never sees half a report.
    await this.client
      .send(
        new PutObjectCommand({
          Bucket: this.bucket,
          Key: this.objectKey(key),
          Body: json,
          ContentType: 'application/json',
        }),
      )
      .catch((error: unknown) => {
        throw unavailable('the report could not be stored', error);
      });
    return key;
  }

  async readReport(jobId: string): Promise<string | null> {
    try {
      const got = await this.client.send(
        new GetObjectCommand({ Bucket: this.bucket, Key: this.objectKey(`reports/${jobId}.json`) }),
      );
      return (await got.Body?.transformToString('utf8')) ?? null;
    } catch (error) {
      if (statusOf(error) === 404) return null;
      throw unavailable('the report could not be read', error);
    }
  }

  async remove(key: string): Promise<void> {
    await this.client
      .send(new DeleteObjectCommand({ Bucket: this.bucket, Key: this.objectKey(key) }))
      .catch((error) => {
        throw unavailable('the stored object could not be removed', error);
      });
  }

  /** Objects under uploads/ and reports/ last modified before the cutoff, then this host's stale copies. */
  async sweep(maxAgeMs: number): Promise<Swept> {
    const cutoff = Date.now() - maxAgeMs;
    const keys: string[] = [];
    for (const folder of ['uploads/', 'reports/']) {
      let token: string | undefined;
      do {
        const page = await this.client.send(
          new ListObjectsV2Command({
            Bucket: this.bucket,
            Prefix: this.prefix + folder,
            ...(token ? { ContinuationToken: token } : {}),
          }),
        );
        for (const item of page.Contents ?? []) {
          if (!item.Key || !item.LastModified || item.LastModified.getTime() >= cutoff) continue;
          await this.client.send(new DeleteObjectCommand({ Bucket: this.bucket, Key: item.Key }));
          keys.push(item.Key.slice(this.prefix.length));
        }
        token = page.IsTruncated ? page.NextContinuationToken : undefined;
      } while (token);
    }
    return { keys, tempFiles: (await sweepDirs(this.localDir, [COPIES, SHORT_COPIES], maxAgeMs)).length };
  }

  /** Short-lived copies a killed process left (a copy being written is touched by every write,
   * and one in use lives seconds). An abandoned multipart upload is aborted by its request, and
   * one a killed process left is the bucket's lifecycle rule's to remove (see the README). */
  async sweepPartials(maxAgeMs: number): Promise<number> {
    return (await sweepDirs(this.localDir, [SHORT_COPIES], maxAgeMs)).length;
  }

  async checkWritable(): Promise<boolean> {
    try {
      await this.client.send(new HeadBucketCommand({ Bucket: this.bucket }));
      return true;
    } catch {
      return false;
    }
  }
}
