// Per-key rate limit: keyed by tenant and key id (never the IP, so clients behind one NAT do not
// share a budget and one key cannot dodge it from many hosts). Counts live in this API process;
// open routes (health, pages, the OpenAPI document) have no principal and are not limited.
// Requests without a valid key stop at auth (401) before they get here.

import rateLimit from '@fastify/rate-limit';
import type { FastifyInstance } from 'fastify';
import { EarmarkError } from '../../errors/index.ts';

const WINDOW_MS = 60_000;

export function rateLimitPlugin(perMinute: number) {
  const plugin = async (app: FastifyInstance) => {
    if (perMinute === 0) return;
    await app.register(rateLimit, {
      global: true,
      max: perMinute,
      timeWindow: WINDOW_MS,
      hook: 'onRequest',
      allowList: (request) => request.principal === null,
      keyGenerator: (request) => `${request.principal?.tenant ?? '-'}:${request.principal?.keyId ?? '-'}`,
      // The plugin has set Retry-After (seconds) already; the error handler sends the problem.
      errorResponseBuilder: (_request, context) =>
        new EarmarkError('rate_limited', `at most ${context.max} requests per minute for this API key; retry in ${context.after}`),
    });
  };
  return Object.assign(plugin, { [Symbol.for('skip-override')]: true });
}
