// One outbound HTTP request through the URL policy, with a timeout and a response size cap.
// Redirects are not followed: each hop would need its own policy check, and neither a source
// file nor a webhook receiver needs them.

import { request as httpRequest, type IncomingMessage } from 'node:http';
import { request as httpsRequest } from 'node:https';
import { EarmarkError, errnoCode } from '../errors/index.ts';
import type { UrlPolicy } from './url-guard.ts';

export interface OutboundRequest {
  url: URL;
  field: string;
  method: 'GET' | 'POST';
  headers?: Record<string, string>;
  body?: string;
  timeoutMs: number;
  /** Aborts the request, and the response while it is being read, with the signal's reason. */
  signal?: AbortSignal;
}

/** Sends the request; the caller consumes or destroys the response. */
export function send(policy: UrlPolicy, req: OutboundRequest): Promise<IncomingMessage> {
  const request = req.url.protocol === 'https:' ? httpsRequest : httpRequest;
  return new Promise((resolve, reject) => {
    let response: IncomingMessage | undefined;
    const r = request(
      req.url,
      {
        method: req.method,
        headers: { 'user-agent': 'earmark', ...req.headers },
        lookup: policy.lookupFor(req.url.hostname, req.field),
        timeout: req.timeoutMs,
      },
      (res) => {
        response = res;
        resolve(res);
      },
    );
    // The socket's idle timeout stays armed while the body is read: the response is destroyed
    // first with our error, so its reader sees why (destroying the request alone says "aborted").
    const stop = (error: Error) => {
      response?.destroy(error);
      r.destroy(error);
    };
    r.on('timeout', () =>
      stop(
        new EarmarkError('source_stalled', `${req.field}: nothing arrived for ${req.timeoutMs} ms`, {
          field: req.field,
          transient: true,
        }),
      ),
    );
    if (req.signal) {
      const onAbort = () =>
        stop(
          req.signal?.reason instanceof Error
            ? req.signal.reason
            : new EarmarkError('source_stalled', `${req.field}: aborted`, { field: req.field, transient: true }),
        );
      if (req.signal.aborted) {
        onAbort();
        return;
      }
      req.signal.addEventListener('abort', onAbort, { once: true });
    }
    r.on('error', (error) => {
      if (error instanceof EarmarkError) return reject(error);
      reject(
        new EarmarkError(
          'source_fetch_failed',
          `${req.field}: the request failed (${errnoCode(error) ?? 'network error'})`,
          { field: req.field, transient: true },
        ),
      );
    });
    // Literal IP hosts skip the lookup hook, so check them here.
    const literal = req.url.hostname.replace(/^\[|\]$/g, '');
    if (/^[\d.]+$|:/.test(literal) && !policy.addressAllowed(literal, literal)) {
      r.destroy(
        new EarmarkError('source_refused', `${req.field} points to an address that is not allowed`, {
          field: req.field,
        }),
      );
      return;
    }
    r.end(req.body);
  });
}
