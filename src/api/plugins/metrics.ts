// GET /metrics (Prometheus text). A key with the metrics scope sees its own tenant: its requests
// to this process and their latency, its submissions, its jobs by state and its jobs finished in
// the last minute. view=all (operator scope too) is the whole service: every tenant's requests
// (labelled by tenant), job outcomes and analysis time from the workers' counters, queue depth
// from BullMQ, and this process's own figures. The figures themselves: ../metrics.ts.

import fp from 'fastify-plugin';
import type { AppDeps } from '../deps.ts';
import { route, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { AUTH_PLUGIN, principalOf, requireScope } from './auth.ts';

const problem = { description: 'Problem', schema: S.Problem, contentType: 'application/problem+json' };

export const metricsSpecs = {
  metrics: {
    method: 'GET',
    url: '/metrics',
    operationId: 'metrics',
    tag: 'health',
    scope: 'metrics',
    summary: "Prometheus metrics of the key's tenant (the whole service with view=all and the operator scope)",
    querystring: S.ViewQuery,
    responses: {
      200: { description: 'Prometheus text format', schema: { type: 'string' }, contentType: 'text/plain' },
      400: problem,
      401: problem,
      403: problem,
    },
  },
} satisfies Record<string, RouteSpec>;

export function metricsPlugin(deps: AppDeps) {
  return fp(
    async (app) => {
      app.addHook('onResponse', async (request, reply) => {
        // The route pattern, never the raw URL: ids would make unbounded label sets.
        const labels = {
          method: request.method,
          route: request.routeOptions.url ?? 'unmatched',
          status: String(reply.statusCode),
        };
        deps.metrics.observeRequest(request.principal?.tenant ?? '', labels, reply.elapsedTime / 1000);
      });
      route(app, metricsSpecs.metrics, async (request, reply) => {
        const principal = principalOf(request);
        const { view } = request.query;
        if (view === 'all') requireScope(principal, 'operator');
        return reply.type('text/plain; version=0.0.4').send(await deps.metrics.render(view, principal.tenant, deps));
      });
    },
    { name: 'earmark-metrics', fastify: '5.x', dependencies: [AUTH_PLUGIN] },
  );
}
