// The API's Prometheus metrics (prom-client). Each tenant's figures live in a registry of its own,
// so a tenant's scrape cannot show another's; the service registry carries the same requests
// labelled by tenant, for the operator. Figures other processes write (job outcomes and analysis
// time from the workers, queue depth from BullMQ) are read from Redis into a registry made for
// each response.

import { AggregatorRegistry, collectDefaultMetrics, Counter, Gauge, Histogram, Registry } from 'prom-client';
import { bullKeys } from '../queue/job-index.ts';
import type { OutcomeCounters } from '../queue/outcomes.ts';
import type { AppDeps } from './deps.ts';

export type MetricsView = 'tenant' | 'all';

interface RequestLabels {
  method: string;
  route: string;
  status: string;
}

/** Request latency bounds (seconds): prom-client's defaults. */
const LATENCY_BUCKETS_SECONDS = [0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10];

const REQUESTS_HELP = 'HTTP requests answered by this API process.';
const LATENCY_HELP = 'Time to answer HTTP requests in this API process.';
const SUBMITTED_HELP = 'Jobs accepted by this API process (repeated Idempotency-Key submissions not counted).';

class TenantMetrics {
  readonly registry = new Registry();
  readonly requests = new Counter({
    name: 'earmark_http_requests_total',
    help: REQUESTS_HELP,
    labelNames: ['method', 'route', 'status'],
    registers: [this.registry],
  });
  readonly latency = new Histogram({
    name: 'earmark_http_request_duration_seconds',
    help: LATENCY_HELP,
    labelNames: ['method', 'route', 'status'],
    buckets: LATENCY_BUCKETS_SECONDS,
    registers: [this.registry],
  });
  readonly submitted = new Counter({
    name: 'earmark_jobs_submitted_total',
    help: SUBMITTED_HELP,
    registers: [this.registry],
  });
}

/**
 * Analysis time as the workers record it in Redis: histogram counts read, not observed here, so
 * they go through prom-client's aggregator, which builds metrics from other processes' figures.
 */
function analysisHistogram(stored: OutcomeCounters): Registry {
  const name = 'earmark_analysis_seconds';
  const values = [
    ...stored.analysisBuckets.map((b) => ({
      metricName: `${name}_bucket`,
      labels: { le: b.leSeconds },
      value: b.count,
    })),
    { metricName: `${name}_bucket`, labels: { le: '+Inf' }, value: stored.analysisCount },
    { metricName: `${name}_sum`, labels: {}, value: stored.analysisSumSeconds },
    { metricName: `${name}_count`, labels: {}, value: stored.analysisCount },
  ];
  return AggregatorRegistry.aggregate([
    [
      {
        name,
        help: 'Time spent analysing jobs, as recorded by the workers.',
        type: 'histogram',
        aggregator: 'sum',
        values,
      },
    ],
  ]);
}

export class ApiMetrics {
  private readonly tenants = new Map<string, TenantMetrics>();
  private readonly service = new Registry();
  private readonly process = new Registry();
  private readonly requests = new Counter({
    name: 'earmark_http_requests_total',
    help: REQUESTS_HELP,
    labelNames: ['tenant', 'method', 'route', 'status'],
    registers: [this.service],
  });
  private readonly latency = new Histogram({
    name: 'earmark_http_request_duration_seconds',
    help: LATENCY_HELP,
    labelNames: ['method', 'route', 'status'],
    buckets: LATENCY_BUCKETS_SECONDS,
    registers: [this.service],
  });
  private readonly submitted = new Counter({
    name: 'earmark_jobs_submitted_total',
    help: SUBMITTED_HELP,
    labelNames: ['tenant'],
    registers: [this.service],
  });

  constructor() {
    collectDefaultMetrics({ register: this.process });
  }

  private tenant(tenant: string): TenantMetrics {
    let metrics = this.tenants.get(tenant);
    if (!metrics) this.tenants.set(tenant, (metrics = new TenantMetrics()));
    return metrics;
  }

  /** tenant is '' for requests without a valid key: they count in the service view only. */
  observeRequest(tenant: string, labels: RequestLabels, seconds: number): void {
    this.requests.inc({ tenant, ...labels });
    this.latency.observe(labels, seconds);
    if (tenant === '') return;
    const own = this.tenant(tenant);
    own.requests.inc(labels);
    own.latency.observe(labels, seconds);
  }

  jobSubmitted(tenant: string): void {
    this.submitted.inc({ tenant });
    this.tenant(tenant).submitted.inc();
  }

  /** The exposition text for one scrape: the tenant's own figures, or the whole service's. */
  async render(view: MetricsView, tenant: string, deps: AppDeps): Promise<string> {
    const now = new Registry();
    const registries =
      view === 'all'
        ? [this.service, ...(await serviceFigures(now, deps)), this.process]
        : [this.tenant(tenant).registry, await tenantFigures(now, tenant, deps)];
    return Registry.merge(registries).metrics();
  }
}

async function serviceFigures(registry: Registry, deps: AppDeps): Promise<Registry[]> {
  const [counters, depth] = await Promise.all([
    deps.store.outcomes.counters(),
    deps.queue.getJobCounts('waiting', 'active', 'delayed', 'prioritized'),
  ]);
  const jobs = new Counter({
    name: 'earmark_jobs_total',
    help: 'Analysis jobs finished, by outcome.',
    labelNames: ['outcome'],
    registers: [registry],
  });
  for (const outcome of ['completed', 'failed']) jobs.inc({ outcome }, counters.jobs[outcome] ?? 0);
  const queue = new Gauge({
    name: 'earmark_queue_jobs',
    help: 'Jobs in the analysis queue, by state.',
    labelNames: ['state'],
    registers: [registry],
  });
  // Every job waits as a prioritized one (fair share, src/queue/fair-share.ts): "waiting" counts both lanes.
  queue.set({ state: 'waiting' }, (depth.waiting ?? 0) + (depth.prioritized ?? 0));
  for (const state of ['active', 'delayed']) queue.set({ state }, depth[state] ?? 0);
  return [registry, analysisHistogram(counters)];
}

/** Counted from the tenant's retained jobs: gauges, as they drop when retention removes jobs. */
async function tenantFigures(registry: Registry, tenant: string, deps: AppDeps): Promise<Registry> {
  const c = await deps.store.index.counts(tenant, bullKeys(deps.queue), Date.now() - 60_000);
  const jobs = new Gauge({
    name: 'earmark_tenant_jobs',
    help: "This tenant's retained jobs, by state.",
    labelNames: ['state'],
    registers: [registry],
  });
  jobs.set({ state: 'waiting' }, c.waiting + c.prioritized);
  for (const state of ['active', 'delayed', 'completed', 'failed'] as const) jobs.set({ state }, c[state]);
  new Gauge({
    name: 'earmark_tenant_jobs_finished_last_minute',
    help: "This tenant's jobs finished in the last minute.",
    registers: [registry],
  }).set(c.finishedSince);
  return registry;
}
