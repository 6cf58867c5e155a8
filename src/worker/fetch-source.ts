// Fetches a sourceUrl into storage under the size cap and an overall deadline (an idle timeout
// alone lets a source that drips a byte now and then hold a worker for ever). Refusals and 4xx
// answers are bad input (no retry); network faults, stalls and 5xx are transient (retried).

import { fetchDeadlineMs } from '../config/index.ts';
import { EarmarkError, isEarmarkError } from '../errors/index.ts';
import { send } from '../net/http-request.ts';
import type { UrlPolicy } from '../net/url-guard.ts';
import type { Storage, StoredFile } from '../storage/index.ts';

export async function fetchSource(
  policy: UrlPolicy,
  storage: Storage,
  raw: string,
  limitBytes: number,
  timeoutMs: number,
  deadlineMs = fetchDeadlineMs(),
): Promise<StoredFile> {
  const url = policy.parse(raw, 'sourceUrl');
  const controller = new AbortController();
  const timer = setTimeout(
    () =>
      controller.abort(
        new EarmarkError('source_stalled', `sourceUrl: the file did not arrive within ${deadlineMs} ms`, {
          field: 'sourceUrl',
          transient: true,
        }),
      ),
    deadlineMs,
  );
  try {
    const response = await send(policy, {
      url,
      field: 'sourceUrl',
      method: 'GET',
      timeoutMs,
      signal: controller.signal,
    });
    const status = response.statusCode ?? 0;
    if (status < 200 || status >= 300) {
      response.resume();
      throw new EarmarkError('source_fetch_failed', `sourceUrl answered HTTP ${status}`, {
        field: 'sourceUrl',
        transient: status >= 500 || status === 429,
      });
    }
    const declared = Number(response.headers['content-length'] ?? NaN);
    if (declared > limitBytes) {
      response.destroy();
      throw new EarmarkError('payload_too_large', `the source file is larger than ${limitBytes} bytes`, { limitBytes });
    }
    return await storage.saveUpload(response, limitBytes).catch((error: unknown) => {
      if (controller.signal.aborted && isEarmarkError(controller.signal.reason)) throw controller.signal.reason;
      // "The upload ended early" is the client's fault for an upload, the network's here.
      if (isEarmarkError(error) && error.code === 'validation_failed')
        throw new EarmarkError('source_fetch_failed', 'sourceUrl: the connection closed before the file ended', {
          field: 'sourceUrl',
          transient: true,
        });
      throw error;
    });
  } finally {
    clearTimeout(timer);
  }
}
