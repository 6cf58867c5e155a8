// Writes a stream of chunks to a new file through two fixed buffers: one fills while the other is
// on its way to disk. The socket's chunks are copied and let go at once, so they die young in the
// garbage collector's nursery; kept until their write (as a write stream keeps them) they are
// promoted and their memory is only freed by full collections, which an upload then triggers
// dozens of times per GB ("external memory pressure"). Memory stays two buffers whatever the size.
import { open, type FileHandle } from 'node:fs/promises';

export const WRITE_BLOCK_BYTES = 1024 * 1024;
/** Buffers kept for the next uploads (eight serve four at once): a fresh 1 MiB buffer is mapped
 * anew and faulted in page by page on first use. */
const POOL_SIZE = 8;
const pool: Buffer[] = [];
const takeBuffer = () => pool.pop() ?? Buffer.allocUnsafeSlow(WRITE_BLOCK_BYTES);
const giveBack = (buffer: Buffer) => {
  if (pool.length < POOL_SIZE) pool.push(buffer);
};

/** Consumes `chunks` into a file created at `path` (it must not exist); the file is closed either way. */
export async function writeChunksToNewFile(path: string, chunks: AsyncIterable<Uint8Array>): Promise<void> {
  const handle = await open(path, 'wx');
  try {
    let filling = takeBuffer();
    let spare = takeBuffer();
    let filled = 0;
    // A failed write is kept and thrown at the next flush or at the end, never left unhandled.
    let failure: { error: unknown } | null = null;
    let inFlight: Promise<void> = Promise.resolve();
    const settle = async () => {
      await inFlight;
      if (failure) throw failure.error;
    };
    const flush = async () => {
      await settle(); // the spare buffer is free again
      inFlight = writeAll(handle, filling.subarray(0, filled)).catch((error: unknown) => {
        failure ??= { error };
      });
      [filling, spare] = [spare, filling];
      filled = 0;
    };
    try {
      for await (const chunk of chunks) {
        for (let at = 0; at < chunk.length; ) {
          const n = Math.min(chunk.length - at, WRITE_BLOCK_BYTES - filled);
          filling.set(chunk.subarray(at, at + n), filled);
          filled += n;
          at += n;
          if (filled === WRITE_BLOCK_BYTES) await flush();
        }
      }
      if (filled > 0) await flush();
      await settle();
    } finally {
      // Never close the handle under a running write, nor hand back a buffer it is reading.
      await inFlight;
      giveBack(filling);
      giveBack(spare);
    }
  } finally {
    await handle.close();
  }
}

/** FileHandle.write may write less than asked (a full disk mid-buffer); the rest follows. */
async function writeAll(handle: FileHandle, bytes: Uint8Array): Promise<void> {
  for (let at = 0; at < bytes.length; ) {
    const { bytesWritten } = await handle.write(bytes, at, bytes.length - at);
    at += bytesWritten;
  }
}
