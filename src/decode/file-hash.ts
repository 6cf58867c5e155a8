// SHA-256 of a whole file from the bytes its decoder reads anyway, so the file is read once.
// The decoder reports each span it reads (DecodeOptions.onBytes). Bytes hash in file order:
// spans already hashed are skipped, a short gap before a span (an MP4 index read on its own) is
// read here, and a span far ahead (a header scan that looks past the audio) is left for the
// reader that comes back to it. digest() reads whatever was never reached, such as bytes after
// the audio, so the result always equals the hash of the whole file; when the decoder reads
// out of order the remainder is one read of the rest of the file, as a separate hash would be.
import { createHash } from 'node:crypto';
import { closeSync, openSync, readSync } from 'node:fs';
import { open } from 'node:fs/promises';
import type { ByteObserver } from './types.ts';

/**
 * Largest gap read on the spot; a farther span waits for a sequential reader to reach it. Small,
 * since a header scan that skips an audio chunk shorter than this has that chunk read twice.
 */
export const GAP_FILL_MAX_BYTES = 1024 * 1024;
const READ_BYTES = 1024 * 1024;

export class FileHash {
  private readonly hash = createHash('sha256');
  /** Offset of the first byte not yet hashed. */
  private hashedBytes = 0;
  /** Set when the file ends before a span the decoder read: it changed under us. */
  private changed = false;
  private readBuffer: Uint8Array | null = null;

  constructor(private readonly path: string) {}

  /** Bytes from the start of the file hashed so far. */
  get hashedLength(): number {
    return this.hashedBytes;
  }

  readonly onBytes: ByteObserver = (position, bytes) => {
    const end = position + bytes.length;
    if (this.changed || end <= this.hashedBytes) return;
    if (position > this.hashedBytes) {
      if (position - this.hashedBytes > GAP_FILL_MAX_BYTES) return;
      this.fillGap(position);
      if (this.changed) return;
    }
    this.hash.update(bytes.subarray(this.hashedBytes - position));
    this.hashedBytes = end;
  };

  /** Hex SHA-256 of the whole file, reading the bytes no span covered; null if the file changed while read. */
  async digest(): Promise<string | null> {
    if (this.changed) return null;
    const handle = await open(this.path, 'r');
    try {
      const buffer = this.buffer();
      for (;;) {
        const { bytesRead } = await handle.read(buffer, 0, buffer.length, this.hashedBytes);
        if (bytesRead === 0) break;
        this.hash.update(buffer.subarray(0, bytesRead));
        this.hashedBytes += bytesRead;
      }
    } finally {
      await handle.close();
    }
    return this.hash.digest('hex');
  }

  private buffer(): Uint8Array {
    this.readBuffer ??= new Uint8Array(READ_BYTES);
    return this.readBuffer;
  }

  /** Hashes the file's bytes from hashedBytes up to `position`, synchronously (the gap is short). */
  private fillGap(position: number): void {
    const fd = openSync(this.path, 'r');
    try {
      const buffer = this.buffer();
      while (this.hashedBytes < position) {
        const want = Math.min(buffer.length, position - this.hashedBytes);
        const bytesRead = readSync(fd, buffer, 0, want, this.hashedBytes);
        if (bytesRead === 0) {
          this.changed = true;
          return;
        }
        this.hash.update(buffer.subarray(0, bytesRead));
        this.hashedBytes += bytesRead;
      }
    } finally {
      closeSync(fd);
    }
  }
}
