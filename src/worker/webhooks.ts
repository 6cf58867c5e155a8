// Webhook signing and delivery. Signature: HMAC-SHA256 over "<timestamp>.<body>" with the
// tenant's secret, sent as `Earmark-Signature: t=<unix seconds>,v1=<hex>`; the receiver
// recomputes it and rejects old timestamps (replay). The delivery id stays the same across
// retries so a receiver can drop duplicates.

import { createHmac, timingSafeEqual } from 'node:crypto';
import { EarmarkError, isEarmarkError } from '../errors/index.ts';
import { send } from '../net/http-request.ts';
import type { UrlPolicy } from '../net/url-guard.ts';

export const SIGNATURE_HEADER = 'earmark-signature';
export const DELIVERY_HEADER = 'earmark-delivery';
export const EVENT_HEADER = 'earmark-event';

export function sign(secret: string, timestampSeconds: number, body: string): string {
  const mac = createHmac('sha256', secret).update(`${timestampSeconds}.${body}`).digest('hex');
  return `t=${timestampSeconds},v1=${mac}`;
}

/** Receiver side (used by the tests; the README shows the same recipe). */
export function verify(
  secret: string,
  header: string,
  body: string,
  nowSeconds: number,
  toleranceSeconds = 300,
): boolean {
  const parts = Object.fromEntries(header.split(',').map((p) => p.split('=') as [string, string]));
  const t = Number(parts.t);
  if (!Number.isFinite(t) || Math.abs(nowSeconds - t) > toleranceSeconds || !parts.v1) return false;
  const expected = Buffer.from(sign(secret, t, body).split('v1=')[1], 'hex');
  const given = Buffer.from(parts.v1, 'hex');
  return given.length === expected.length && timingSafeEqual(given, expected);
}

export interface DeliveryResult {
  statusCode: number | null;
}

export async function deliver(
  policy: UrlPolicy,
  args: { url: string; secret: string; deliveryId: string; event: string; body: string; timeoutMs: number },
): Promise<DeliveryResult> {
  const url = policy.parse(args.url, 'callbackUrl');
  const signature = sign(args.secret, Math.floor(Date.now() / 1000), args.body);
  const response = await send(policy, {
    url,
    field: 'callbackUrl',
    method: 'POST',
    timeoutMs: args.timeoutMs,
    body: args.body,
    headers: {
      'content-type': 'application/json',
      [SIGNATURE_HEADER]: signature,
      [DELIVERY_HEADER]: args.deliveryId,
      [EVENT_HEADER]: args.event,
    },
  }).catch((error: unknown) => {
    throw asWebhookFailure(error);
  });
  response.resume();
  const statusCode = response.statusCode ?? 0;
  if (statusCode < 200 || statusCode >= 300) {
    throw new EarmarkError('webhook_failed', `callbackUrl answered HTTP ${statusCode}`, {
      field: 'callbackUrl',
      statusCode,
    });
  }
  return { statusCode };
}

/** The shared HTTP client speaks of sources; a callback that cannot be reached or stalls is a webhook failure (a refused URL stays refused). */
function asWebhookFailure(error: unknown): unknown {
  if (!isEarmarkError(error) || (error.code !== 'source_fetch_failed' && error.code !== 'source_stalled')) return error;
  return new EarmarkError('webhook_failed', error.message, error.details, { cause: error });
}
