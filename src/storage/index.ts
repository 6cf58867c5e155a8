// Storage for uploads and reports. One small interface; the local-directory implementation
// works for several hosts when the directory is a shared volume. Keys are generated here,
// never taken from a client, so a key can always be mapped to a path safely.

import { createHash, randomUUID } from 'node:crypto';
import { access, constants, mkdir, readdir, readFile, rename, rm, stat, utimes, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { PassThrough, type Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { EarmarkError } from '../errors/index.ts';
import { writeChunksToNewFile } from './block-file-writer.ts';

export interface StoredFile {
  key: string;
  sizeBytes: number;
  sha256: string;
}

export interface Storage {
  /** Streams into a new upload; over limitBytes the partial file is removed and payload_too_large thrown. */
  saveUpload(source: Readable, limitBytes: number, isTruncated?: () => boolean): Promise<StoredFile>;
  pathOf(key: string): string;
  writeReport(jobId: string, json: string): Promise<string>;
  readReport(jobId: string): Promise<string | null>;
  remove(key: string): Promise<void>;
  /** Deletes uploads and reports older than maxAgeMs; returns how many went. */
  sweep(maxAgeMs: number): Promise<number>;
  /** Deletes partial files (uploads in progress, reports being written) untouched for maxAgeMs. */
  sweepPartials(maxAgeMs: number): Promise<number>;
  checkWritable(): Promise<boolean>;
}

const KEY = /^(uploads|reports)\/[A-Za-z0-9_-]+(\.json)?$/;

class LimitError extends Error {}
class SourceAborted extends Error {}

export interface StorageOptions {
  /** A temp file being written is touched (mtime) at least this often while bytes arrive, even
   * between the writer's 1 MiB blocks, so the partial-file sweep can tell live from dead. */
  partialTouchMs?: number;
}

export class LocalStorage implements Storage {
  private readonly partialTouchMs: number;

  constructor(
    readonly rootDir: string,
    options: StorageOptions = {},
  ) {
    this.partialTouchMs = options.partialTouchMs ?? 10_000;
  }

  async init(): Promise<this> {
    for (const dir of ['uploads', 'reports', 'tmp']) await mkdir(join(this.rootDir, dir), { recursive: true });
    return this;
  }

  pathOf(key: string): string {
    if (!KEY.test(key)) throw new EarmarkError('invalid_argument', 'malformed storage key');
    return join(this.rootDir, key);
  }

  async saveUpload(source: Readable, limitBytes: number, isTruncated?: () => boolean): Promise<StoredFile> {
    const key = `uploads/${randomUUID()}`;
    const tmp = join(this.rootDir, 'tmp', randomUUID());
    let sizeBytes = 0;
    const hash = createHash('sha256');
    const touchMs = this.partialTouchMs;
    let touchedAt = Date.now();
    const counter = async function* (chunks: AsyncIterable<Buffer>) {
      for await (const chunk of chunks) {
        sizeBytes += chunk.length;
        hash.update(chunk);
        if (sizeBytes > limitBytes) throw new LimitError();
        if (Date.now() - touchedAt >= touchMs) {
          touchedAt = Date.now();
          const now = new Date(touchedAt);
          await utimes(tmp, now, now).catch(() => undefined);
        }
        yield chunk;
      }
    };
    // Through a PassThrough: a failed write destroys it, not the client's stream, which is then
    // drained so the client can read the answer instead of a reset connection.
    const input = source.pipe(new PassThrough());
    // pipe() does not pass on a source destroyed mid-file (client gone, multipart limit hit);
    // a typed reason (a fetch deadline) is kept.
    const aborted = (reason?: unknown) => {
      if (!source.readableEnded) input.destroy(reason instanceof EarmarkError ? reason : new SourceAborted());
    };
    // A multipart file stream cut at its size limit emits 'limit' and then nothing until the
    // part ends in the body, which an abandoned or endless body never does: stop at once.
    const overLimit = () => input.destroy(new LimitError());
    source.once('close', aborted).once('error', aborted).once('limit', overLimit);
    if (source.destroyed) aborted();
    try {
      await pipeline(input, counter, (chunks) => writeChunksToNewFile(tmp, chunks));
      if (isTruncated?.()) throw new LimitError();
      source.off('close', aborted).off('error', aborted).off('limit', overLimit);
      await rename(tmp, this.pathOf(key));
      return { key, sizeBytes, sha256: hash.digest('hex') };
    } catch (error) {
      source.off('close', aborted).off('error', aborted).off('limit', overLimit);
      source.unpipe(input);
      source.resume();
      // A broken temp folder (ENOTDIR, EACCES) must not stop the answer.
      await rm(tmp, { force: true }).catch(() => undefined);
      if (error instanceof LimitError)
        throw new EarmarkError('payload_too_large', `the upload is larger than ${limitBytes} bytes`, { limitBytes });
      if (error instanceof EarmarkError) throw error;
      if (error instanceof SourceAborted)
        throw new EarmarkError('validation_failed', 'the upload ended before the file did', { field: 'file' });
      const errno = (error as NodeJS.ErrnoException).code;
      if (errno === 'ENOSPC' || errno === 'EDQUOT')
        throw new EarmarkError('storage_full', 'storage is full; the upload was not kept', {}, { cause: error });
      throw new EarmarkError('storage_unavailable', 'the upload could not be stored', {}, { cause: error });
    }
  }

  /** Temp file + rename: a reader never sees half a report. */
  async writeReport(jobId: string, json: string): Promise<string> {
    const key = `reports/${jobId}.json`;
    const tmp = join(this.rootDir, 'tmp', randomUUID());
    await writeFile(tmp, json, { flag: 'wx' });
    await rename(tmp, this.pathOf(key));
    return key;
  }

  async readReport(jobId: string): Promise<string | null> {
    try {
      return await readFile(this.pathOf(`reports/${jobId}.json`), 'utf8');
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ENOENT') return null;
      throw new EarmarkError('storage_unavailable', 'the report could not be read', {}, { cause: error });
    }
  }

  async remove(key: string): Promise<void> {
    await rm(this.pathOf(key), { force: true });
  }

  sweep(maxAgeMs: number): Promise<number> {
    return this.sweepDirs(['uploads', 'reports', 'tmp'], maxAgeMs);
  }

  /** A live upload's temp file is touched while bytes arrive, and bytes arrive at least once per
   * body (or fetch) timeout or the transfer is ended: an older one is a dead request's or a
   * killed process's. */
  sweepPartials(maxAgeMs: number): Promise<number> {
    return this.sweepDirs(['tmp'], maxAgeMs);
  }

  private async sweepDirs(dirs: string[], maxAgeMs: number): Promise<number> {
    const cutoff = Date.now() - maxAgeMs;
    let removed = 0;
    for (const dir of dirs) {
      const names = await readdir(join(this.rootDir, dir)).catch(() => [] as string[]);
      for (const name of names) {
        const path = join(this.rootDir, dir, name);
        const info = await stat(path).catch(() => null);
        if (info && info.mtimeMs < cutoff) {
          await rm(path, { force: true });
          removed += 1;
        }
      }
    }
    return removed;
  }

  async checkWritable(): Promise<boolean> {
    try {
      await access(join(this.rootDir, 'tmp'), constants.W_OK);
      return true;
    } catch {
      return false;
    }
  }
}

export async function openStorage(rootDir: string, options: StorageOptions = {}): Promise<LocalStorage> {
  try {
    return await new LocalStorage(rootDir, options).init();
  } catch (error) {
    throw new EarmarkError('storage_unavailable', 'the storage directory cannot be created', {}, { cause: error });
  }
}
