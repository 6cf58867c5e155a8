// Receiving an upload stream, shared by every backend: count and hash the bytes as they pass,
// stop at the size limit, notice a client that goes away, and turn each way of failing into a
// typed error. The backend supplies where the bytes go (`write`), how a finished one is kept
// (`commit`) and how a failed one is thrown away (`discard`).
import { createHash } from 'node:crypto';
import { PassThrough, type Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { EarmarkError, errnoCode } from '../errors/index.ts';

class LimitError extends Error {}
class SourceAborted extends Error {}

export interface ReceiveSteps {
  write(chunks: AsyncIterable<Buffer>): Promise<void>;
  commit(): Promise<void>;
  discard(): Promise<void>;
  /** Called for each chunk before it is passed on (the local backend touches its temp file). */
  onChunk?(): Promise<void>;
}

export async function receiveUpload(
  source: Readable,
  limitBytes: number,
  isTruncated: (() => boolean) | undefined,
  steps: ReceiveSteps,
): Promise<{ sizeBytes: number; sha256: string }> {
  let sizeBytes = 0;
  const hash = createHash('sha256');
  // Why the bytes stopped (limit, client gone, fetch deadline): the writer may fail with an error
  // of its own on the way out (an object store refusing the multipart abort), which must not hide it.
  const state: { stopped: { reason: unknown } | null; writing: Promise<void> | null } = {
    stopped: null,
    writing: null,
  };
  const counter = async function* (chunks: AsyncIterable<Buffer>) {
    try {
      for await (const chunk of chunks) {
        sizeBytes += chunk.length;
        hash.update(chunk);
        if (sizeBytes > limitBytes) throw new LimitError();
        if (steps.onChunk) await steps.onChunk();
        yield chunk;
      }
    } catch (reason) {
      state.stopped ??= { reason };
      throw reason;
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
    await pipeline(input, counter, (chunks) => {
      state.writing = steps.write(chunks);
      return state.writing;
    });
    if (isTruncated?.()) throw new LimitError();
    source.off('close', aborted).off('error', aborted).off('limit', overLimit);
    await steps.commit();
    return { sizeBytes, sha256: hash.digest('hex') };
  } catch (thrown) {
    const error = state.stopped ? state.stopped.reason : thrown;
    source.off('close', aborted).off('error', aborted).off('limit', overLimit);
    source.unpipe(input);
    source.resume();
    // A destroyed input ends the pipeline before the writer has wound down (a part in flight, then
    // the multipart abort): discard only after it has.
    await state.writing?.catch(() => undefined);
    // A broken temp folder or object store must not stop the answer.
    await steps.discard().catch(() => undefined);
    if (error instanceof LimitError)
      throw new EarmarkError('payload_too_large', `the upload is larger than ${limitBytes} bytes`, { limitBytes });
    if (error instanceof EarmarkError) throw error;
    if (error instanceof SourceAborted)
      throw new EarmarkError('validation_failed', 'the upload ended before the file did', { field: 'file' });
    const errno = errnoCode(error);
    if (errno === 'ENOSPC' || errno === 'EDQUOT')
      throw new EarmarkError('storage_full', 'storage is full; the upload was not kept', {}, { cause: error });
    throw new EarmarkError('storage_unavailable', 'the upload could not be stored', {}, { cause: error });
  }
}
