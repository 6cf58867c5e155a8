// Liveness (the process answers) and readiness (Redis answers and storage is writable).

import type { AppDeps } from '../deps.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';

export const healthSpecs = {
  live: {
    method: 'GET',
    url: '/healthz',
    operationId: 'healthz',
    tag: 'health',
    scope: null,
    summary: 'The process is alive',
    responses: { 200: { description: 'Alive', schema: S.Health } },
  },
  ready: {
    method: 'GET',
    url: '/readyz',
    operationId: 'readyz',
    tag: 'health',
    scope: null,
    summary: 'Redis answers and storage is writable',
    responses: { 200: { description: 'Ready', schema: S.Health }, 503: { description: 'Not ready', schema: S.Health } },
  },
} satisfies Record<string, RouteSpec>;

async function redisAnswers(deps: AppDeps): Promise<boolean> {
  let timer: NodeJS.Timeout | undefined;
  try {
    return await Promise.race([
      deps.redis.ping().then((r) => r === 'PONG'),
      new Promise<boolean>((resolve) => {
        timer = setTimeout(() => resolve(false), 1_000);
      }),
    ]);
  } catch {
    return false;
  } finally {
    clearTimeout(timer);
  }
}

export function healthPlugin(deps: AppDeps) {
  return routesPlugin('earmark-health', async (app) => {
    route(app, healthSpecs.live, async () => ({ status: 'ok' }));
    route(app, healthSpecs.ready, async (_request, reply) => {
      const [redis, storage] = await Promise.all([redisAnswers(deps), deps.storage.checkWritable()]);
      const ok = redis && storage;
      if (!ok) reply.code(503).header('retry-after', '5');
      return { status: ok ? 'ok' : 'unavailable', redis, storage };
    });
  });
}
