// The local-directory backend; it works for several hosts when the directory is a shared volume.
// Keys are generated here, never taken from a client, so a key can always be mapped to a path safely.
import { randomUUID } from 'node:crypto';
import { access, constants, mkdir, readdir, readFile, rename, rm, stat, utimes, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { Readable } from 'node:stream';
import { EarmarkError, errnoCode } from '../errors/index.ts';
import { writeChunksToNewFile } from './block-file-writer.ts';
import { receiveUpload } from './receive.ts';
import {
  KEY,
  type LocalCopy,
  type PresignedUpload,
  type Storage,
  type StorageOptions,
  type StoredFile,
  type Swept,
} from './types.ts';

export class LocalStorage implements Storage {
  readonly kind = 'file';
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

  /** The stored file itself: nothing is copied and release() leaves it alone. */
  async localCopy(key: string): Promise<LocalCopy> {
    return { path: this.pathOf(key), sha256: null, release: async () => undefined };
  }

  /** The stored file itself, as for localCopy. */
  excerptCopy(key: string): Promise<LocalCopy> {
    return this.localCopy(key);
  }

  /** A directory has no signed URLs: the API is the only way in. */
  async presignUpload(): Promise<PresignedUpload> {
    throw new EarmarkError(
      'direct_upload_unavailable',
      'direct uploads need the object-store backend (EARMARK_STORAGE_URL=s3://...); upload through POST /v1/jobs',
    );
  }

  checkSource(): { bucket: string; key: string } {
    throw new EarmarkError(
      'source_refused',
      's3:// sources need the object-store backend (EARMARK_STORAGE_URL=s3://...)',
      {
        field: 'sourceUrl',
      },
    );
  }

  async copySource(url: string): Promise<LocalCopy> {
    this.checkSource();
    throw new Error(`unreachable: ${url}`);
  }

  async sizeOf(key: string): Promise<number | null> {
    const info = await stat(this.pathOf(key)).catch(() => null);
    return info?.isFile() ? info.size : null;
  }

  async saveUpload(source: Readable, limitBytes: number, isTruncated?: () => boolean): Promise<StoredFile> {
    const key = `uploads/${randomUUID()}`;
    const tmp = join(this.rootDir, 'tmp', randomUUID());
    const touchMs = this.partialTouchMs;
    let touchedAt = Date.now();
    const received = await receiveUpload(source, limitBytes, isTruncated, {
      write: (chunks) => writeChunksToNewFile(tmp, chunks),
      commit: () => rename(tmp, this.pathOf(key)),
      discard: () => rm(tmp, { force: true }),
      onChunk: async () => {
        if (Date.now() - touchedAt < touchMs) return;
        touchedAt = Date.now();
        const now = new Date(touchedAt);
        await utimes(tmp, now, now).catch(() => undefined);
      },
    });
    return { key, ...received };
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
      if (errnoCode(error) === 'ENOENT') return null;
      throw new EarmarkError('storage_unavailable', 'the report could not be read', {}, { cause: error });
    }
  }

  async remove(key: string): Promise<void> {
    await rm(this.pathOf(key), { force: true });
  }

  async sweep(maxAgeMs: number): Promise<Swept> {
    const keys = await sweepDirs(this.rootDir, ['uploads', 'reports'], maxAgeMs);
    return { keys, tempFiles: (await sweepDirs(this.rootDir, ['tmp'], maxAgeMs)).length };
  }

  /** A live upload's temp file is touched while bytes arrive, and bytes arrive at least once per
   * body (or fetch) timeout or the transfer is ended: an older one is a dead request's or a
   * killed process's. */
  async sweepPartials(maxAgeMs: number): Promise<number> {
    return (await sweepDirs(this.rootDir, ['tmp'], maxAgeMs)).length;
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

/** Removes files older than maxAgeMs (by mtime) from the folders under rootDir; returns the `dir/name`s that went. */
export async function sweepDirs(rootDir: string, dirs: string[], maxAgeMs: number): Promise<string[]> {
  const cutoff = Date.now() - maxAgeMs;
  const removed: string[] = [];
  for (const dir of dirs) {
    const names = await readdir(join(rootDir, dir)).catch(() => [] as string[]);
    for (const name of names) {
      const path = join(rootDir, dir, name);
      const info = await stat(path).catch(() => null);
      if (info && info.mtimeMs < cutoff) {
        await rm(path, { force: true });
        removed.push(`${dir}/${name}`);
      }
    }
  }
  return removed;
}
