// A callback that answers an error status, or cannot be reached, fails as webhook_failed (retryable by
// the catalogue); a refused callback URL stays source_refused (not retried).
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { isRetryable, type EarmarkError } from '../../src/errors/index.ts';
import { UrlPolicy } from '../../src/net/url-guard.ts';
import { deliver } from '../../src/worker/webhooks.ts';

let server: Server;
let port = 0;
beforeAll(async () => {
  server = createServer((req, res) => {
    req.resume();
    res.statusCode = req.url === '/ok' ? 204 : 500;
    res.end();
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  port = (server.address() as AddressInfo).port;
});
afterAll(() => new Promise<void>((resolve) => server.close(() => resolve())));

const send = (policy: UrlPolicy, url: string) =>
  deliver(policy, { url, secret: 's', deliveryId: 'd', event: 'job.completed', body: '{}', timeoutMs: 2000 });
const failure = (run: Promise<unknown>) =>
  run.then(
    () => null,
    (e: EarmarkError) => e,
  );

describe('webhook delivery errors', () => {
  const loopback = new UrlPolicy(['127.0.0.1/32']);

  it('delivers to a 2xx callback', async () => {
    expect(await send(loopback, `http://127.0.0.1:${port}/ok`)).toEqual({ statusCode: 204 });
  });

  it('an HTTP 500 is webhook_failed with its status, retryable', async () => {
    const error = await failure(send(loopback, `http://127.0.0.1:${port}/fail`));
    expect(error).toMatchObject({ code: 'webhook_failed', details: { statusCode: 500 } });
    expect(isRetryable(error!)).toBe(true);
  });

  it('a closed port is webhook_failed, retryable', async () => {
    const closed = createServer();
    await new Promise<void>((resolve) => closed.listen(0, '127.0.0.1', resolve));
    const closedPort = (closed.address() as AddressInfo).port;
    await new Promise<void>((resolve) => closed.close(() => resolve()));
    const error = await failure(send(loopback, `http://127.0.0.1:${closedPort}/`));
    expect(error).toMatchObject({ code: 'webhook_failed' });
    expect(isRetryable(error!)).toBe(true);
  });

  it('a refused address stays source_refused, not retried', async () => {
    const error = await failure(send(new UrlPolicy([]), `http://127.0.0.1:${port}/ok`));
    expect(error).toMatchObject({ code: 'source_refused' });
    expect(isRetryable(error!)).toBe(false);
  });
});
