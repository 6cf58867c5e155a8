// Prometheus text exposition (version 0.0.4): request counts from this process, job outcomes
// and analysis seconds from the workers' counters in Redis, queue depth from BullMQ.

import type { FastifyInstance } from 'fastify';
import type { AppDeps } from '../deps.ts';
import { route, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';

export const metricsSpecs = {
  metrics: {
    method: 'GET', url: '/metrics', operationId: 'metrics', tag: 'health', scope: 'admin', summary: 'Prometheus metrics',
    responses: { 200: { description: 'Prometheus text format', schema: { type: 'string' }, contentType: 'text/plain' }, 401: { description: 'Problem', schema: S.Problem, contentType: 'application/problem+json' }, 403: { description: 'Problem', schema: S.Problem, contentType: 'application/problem+json' } },
  },
} satisfies Record<string, RouteSpec>;

const label = (v: string) => v.replace(/\\/g, '\\\\').replace(/"/g, '\\"').replace(/\n/g, '\\n');

export function metricsPlugin(deps: AppDeps) {
  const requests = new Map<string, number>();
  return Object.assign(async (app: FastifyInstance) => {
    app.addHook('onResponse', async (request, reply) => {
      // The route pattern, never the raw URL: ids would make unbounded label sets.
      const key = `${request.method} ${request.routeOptions.url ?? 'unmatched'} ${reply.statusCode}`;
      requests.set(key, (requests.get(key) ?? 0) + 1);
    });
    route(app, metricsSpecs.metrics, async (_request, reply) => {
      const [counters, depth] = await Promise.all([deps.store.counters(), deps.queue.getJobCounts('waiting', 'active', 'delayed', 'prioritized')]);
      const lines = ['# HELP earmark_http_requests_total HTTP requests answered by this API process.', '# TYPE earmark_http_requests_total counter'];
      for (const [key, count] of requests) {
        const [method, routeUrl, status] = key.split(' ');
        lines.push(`earmark_http_requests_total{method="${method}",route="${label(routeUrl)}",status="${status}"} ${count}`);
      }
      lines.push('# HELP earmark_jobs_total Analysis jobs finished, by outcome.', '# TYPE earmark_jobs_total counter');
      for (const outcome of ['completed', 'failed']) lines.push(`earmark_jobs_total{outcome="${outcome}"} ${counters.jobs[outcome] ?? 0}`);
      lines.push('# HELP earmark_analysis_seconds Time spent analysing completed jobs.', '# TYPE earmark_analysis_seconds summary');
      lines.push(`earmark_analysis_seconds_sum ${counters.analysisSumSeconds}`, `earmark_analysis_seconds_count ${counters.analysisCount}`);
      lines.push('# HELP earmark_queue_jobs Jobs in the analysis queue, by state.', '# TYPE earmark_queue_jobs gauge');
      for (const state of ['waiting', 'active', 'delayed', 'prioritized']) lines.push(`earmark_queue_jobs{state="${state}"} ${depth[state] ?? 0}`);
      return reply.type('text/plain; version=0.0.4').send(`${lines.join('\n')}\n`);
    });
  }, { [Symbol.for('skip-override')]: true });
}
