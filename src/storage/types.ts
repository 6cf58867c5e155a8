// The storage contract every backend meets; callers never learn which backend they hold.

import type { Readable } from 'node:stream';

export interface StoredFile {
  key: string;
  sizeBytes: number;
  sha256: string;
}

/** A file on this host holding a stored object; release() removes it if it is a temp copy. */
export interface LocalCopy {
  path: string;
  /** SHA-256 of the bytes copied, or null when nothing was copied (the file backend's own file). */
  sha256: string | null;
  release(): Promise<void>;
  /** Bytes fetched from the object store for a partial (sparse) copy; absent for whole copies. */
  fetchedBytes?: number;
}

/** A presigned PUT: the client sends the file to `url` with exactly `headers`, which the signature covers. */
export interface PresignedUpload {
  key: string;
  url: string;
  headers: Record<string, string>;
  expiresAt: Date;
}

export interface Storage {
  readonly kind: 'file' | 's3';
  /** Streams into a new upload; over limitBytes nothing is kept and payload_too_large is thrown. */
  saveUpload(source: Readable, limitBytes: number, isTruncated?: () => boolean): Promise<StoredFile>;
  /** A local file of the object, for decoders that read with random access (see the S3 backend). */
  localCopy(key: string): Promise<LocalCopy>;
  /** A local file an excerpt of [startSeconds, endSeconds) can be cut from: the object store
   * fetches only the bytes a PCM excerpt reads when it can tell which they are. */
  excerptCopy(key: string, startSeconds: number, endSeconds: number): Promise<LocalCopy>;
  /** A URL the client PUTs a file of exactly sizeBytes to, straight into storage (object store only). */
  presignUpload(sizeBytes: number, expiresSeconds: number): Promise<PresignedUpload>;
  /** The stored object's size, or null when there is none. */
  sizeOf(key: string): Promise<number | null>;
  /** An `s3://bucket/key` sourceUrl: its bucket and key when the bucket is one this store may read
   * sources from (EARMARK_S3_SOURCE_BUCKETS), else source_refused. */
  checkSource(url: string): { bucket: string; key: string };
  /** A local copy of an allowed `s3://` source, bounded by limitBytes, hashed as it is copied. */
  copySource(url: string, limitBytes: number): Promise<LocalCopy>;
  writeReport(jobId: string, json: string): Promise<string>;
  readReport(jobId: string): Promise<string | null>;
  remove(key: string): Promise<void>;
  /** Deletes uploads, reports and this host's temp files older than maxAgeMs; says what went. */
  sweep(maxAgeMs: number): Promise<Swept>;
  /** Deletes partial files (uploads in progress, reports being written) untouched for maxAgeMs. */
  sweepPartials(maxAgeMs: number): Promise<number>;
  checkWritable(): Promise<boolean>;
}

export interface Swept {
  /** Storage keys removed (`uploads/<id>`, `reports/<jobId>.json`): the caller drops what refers to them. */
  keys: string[];
  /** Temp files and copies removed from this host's folder. */
  tempFiles: number;
}

export interface StorageOptions {
  /** A temp file being written is touched (mtime) at least this often while bytes arrive, even
   * between the writer's 1 MiB blocks, so the partial-file sweep can tell live from dead. */
  partialTouchMs?: number;
  /** Largest object localCopy copies to this host (the S3 backend); larger is payload_too_large. */
  copyLimitBytes?: number;
  /** Copies are released within seconds (the API's excerpts), so sweepPartials may remove old ones;
   * an analysis's copy lives as long as its job and is left to the retention sweep. */
  shortLivedCopies?: boolean;
}

export const KEY = /^(uploads|reports)\/[A-Za-z0-9_-]+(\.json)?$/;
