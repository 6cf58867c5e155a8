// Prometheus text exposition (version 0.0.4). A key with the metrics scope sees its own tenant:
// its requests to this process, its jobs by state and its jobs finished in the last minute.
// view=all (operator scope too) is the whole service: every tenant's requests (labelled by
// tenant), job outcomes and analysis seconds from the workers' counters, queue depth from BullMQ.

import type { FastifyInstance } from 'fastify';
import { bullKeys } from '../../queue/job-index.ts';
import type { AppDeps } from '../deps.ts';
import { route, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { principalOf, requireScope } from './auth.ts';

const problem = { description: 'Problem', schema: S.Problem, contentType: 'application/problem+json' };

export const metricsSpecs = {
  metrics: {
    method: 'GET', url: '/metrics', operationId: 'metrics', tag: 'health', scope: 'metrics',
    summary: 'Prometheus metrics of the key\'s tenant (the whole service with view=all and the operator scope)',
    querystring: S.ViewQuery,
    responses: { 200: { description: 'Prometheus text format', schema: { type: 'string' }, contentType: 'text/plain' }, 400: problem, 401: problem, 403: problem },
  },
} satisfies Record<string, RouteSpec>;

const label = (v: string) => v.replace(/\\/g, '\\\\').replace(/"/g, '\\"').replace(/\n/g, '\\n');

export function metricsPlugin(deps: AppDeps) {
  // Key: tenant ('' before authentication), method, route pattern, status.
  const requests = new Map<string, number>();
  return Object.assign(async (app: FastifyInstance) => {
    app.addHook('onResponse', async (request, reply) => {
      // The route pattern, never the raw URL: ids would make unbounded label sets.
      const key = [request.principal?.tenant ?? '', request.method, request.routeOptions.url ?? 'unmatched', reply.statusCode].join(' ');
      requests.set(key, (requests.get(key) ?? 0) + 1);
    });
    route(app, metricsSpecs.metrics, async (request, reply) => {
      const principal = principalOf(request);
      const { view } = request.query;
      if (view === 'all') requireScope(principal, 'operator');
      const lines = ['# HELP earmark_http_requests_total HTTP requests answered by this API process.', '# TYPE earmark_http_requests_total counter'];
      for (const [key, count] of requests) {
        const [tenant, method, routeUrl, status] = key.split(' ');
        const series = `method="${method}",route="${label(routeUrl)}",status="${status}"`;
        if (view === 'all') lines.push(`earmark_http_requests_total{tenant="${tenant}",${series}} ${count}`);
        else if (tenant === principal.tenant) lines.push(`earmark_http_requests_total{${series}} ${count}`);
      }
      if (view === 'all') {
        const [counters, depth] = await Promise.all([deps.store.outcomes.counters(), deps.queue.getJobCounts('waiting', 'active', 'delayed', 'prioritized')]);
        lines.push('# HELP earmark_jobs_total Analysis jobs finished, by outcome.', '# TYPE earmark_jobs_total counter');
        for (const outcome of ['completed', 'failed']) lines.push(`earmark_jobs_total{outcome="${outcome}"} ${counters.jobs[outcome] ?? 0}`);
        lines.push('# HELP earmark_analysis_seconds Time spent analysing completed jobs.', '# TYPE earmark_analysis_seconds summary');
        lines.push(`earmark_analysis_seconds_sum ${counters.analysisSumSeconds}`, `earmark_analysis_seconds_count ${counters.analysisCount}`);
        lines.push('# HELP earmark_queue_jobs Jobs in the analysis queue, by state.', '# TYPE earmark_queue_jobs gauge');
        for (const state of ['waiting', 'active', 'delayed', 'prioritized']) lines.push(`earmark_queue_jobs{state="${state}"} ${depth[state] ?? 0}`);
      } else {
        // Counted from the tenant's retained jobs: gauges, as they drop when retention removes jobs.
        const c = await deps.store.index.counts(principal.tenant, bullKeys(deps.queue), Date.now() - 60_000);
        lines.push('# HELP earmark_tenant_jobs This tenant\'s retained jobs, by state.', '# TYPE earmark_tenant_jobs gauge');
        for (const state of ['waiting', 'prioritized', 'active', 'delayed', 'completed', 'failed'] as const) lines.push(`earmark_tenant_jobs{state="${state}"} ${c[state]}`);
        lines.push('# HELP earmark_tenant_jobs_finished_last_minute This tenant\'s jobs finished in the last minute.', '# TYPE earmark_tenant_jobs_finished_last_minute gauge');
        lines.push(`earmark_tenant_jobs_finished_last_minute ${c.finishedSince}`);
      }
      return reply.type('text/plain; version=0.0.4').send(`${lines.join('\n')}\n`);
    });
  }, { [Symbol.for('skip-override')]: true });
}
