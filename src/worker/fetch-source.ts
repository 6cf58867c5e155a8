// Fetches a sourceUrl into storage under the size cap. Refusals and 4xx answers are bad input
// (no retry); network faults, timeouts and 5xx are transient (retried with backoff).

import { EarmarkError } from '../errors/index.ts';
import { send } from '../net/http-request.ts';
import type { UrlPolicy } from '../net/url-guard.ts';
import type { Storage, StoredFile } from '../storage/index.ts';

export async function fetchSource(policy: UrlPolicy, storage: Storage, raw: string, limitBytes: number, timeoutMs: number): Promise<StoredFile> {
  const url = policy.parse(raw, 'sourceUrl');
  const response = await send(policy, { url, field: 'sourceUrl', method: 'GET', timeoutMs });
  const status = response.statusCode ?? 0;
  if (status < 200 || status >= 300) {
    response.resume();
    throw new EarmarkError('source_fetch_failed', `sourceUrl answered HTTP ${status}`, { field: 'sourceUrl', transient: status >= 500 || status === 429 });
  }
  const declared = Number(response.headers['content-length'] ?? NaN);
  if (declared > limitBytes) {
    response.destroy();
    throw new EarmarkError('payload_too_large', `the source file is larger than ${limitBytes} bytes`, { limitBytes });
  }
  return storage.saveUpload(response, limitBytes);
}
