// Per-key rate limit: keyed by tenant and key id (never the IP, so clients behind one NAT do not
// share a budget and one key cannot dodge it from many hosts). Counts live in Redis under the
// deployment's prefix (`<prefix>:svc:rate:`), so every API replica draws on one budget per key.
// Open routes (health, pages, the OpenAPI document) have no principal and are not limited.
// Requests without a valid key stop at auth (401) before they get here: the plugin declares auth
// as a dependency, so registering it first is checked at startup.
//
// Redis down: skipOnError stays false, so the store's error reaches the error handler and the
// request is answered 503 service_unavailable with Retry-After, like every other route that
// needs Redis. Never unlimited: a limit that silently lapses while Redis is away is no limit.

import rateLimit from '@fastify/rate-limit';
import fp from 'fastify-plugin';
import type { Redis } from 'ioredis';
import { EarmarkError } from '../../errors/index.ts';
import { serviceKey } from '../../queue/service-keys.ts';
import { AUTH_PLUGIN } from './auth.ts';

const WINDOW_MS = 60_000;

export interface RateLimitStore {
  redis: Redis;
  queuePrefix: string;
}

export function rateLimitPlugin(perMinute: number, store: RateLimitStore) {
  return fp(
    async (app) => {
      if (perMinute === 0) return;
      await app.register(rateLimit, {
        global: true,
        max: perMinute,
        timeWindow: WINDOW_MS,
        hook: 'onRequest',
        redis: store.redis,
        nameSpace: `${serviceKey(store.queuePrefix, 'rate')}:`,
        skipOnError: false,
        allowList: (request) => request.principal === null,
        keyGenerator: (request) => `${request.principal?.tenant ?? '-'}:${request.principal?.keyId ?? '-'}`,
        // The plugin has set Retry-After (seconds) already; the error handler sends the problem.
        errorResponseBuilder: (_request, context) =>
          new EarmarkError(
            'rate_limited',
            `at most ${context.max} requests per minute for this API key; retry in ${context.after}`,
          ),
      });
    },
    { name: 'earmark-rate-limit', fastify: '5.x', dependencies: [AUTH_PLUGIN] },
  );
}
