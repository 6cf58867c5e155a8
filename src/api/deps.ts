// What the HTTP app needs from the outside; the entrypoint builds these, tests build their own.

import type { Redis } from 'ioredis';
import type { UrlPolicy } from '../net/url-guard.ts';
import type { ApiMetrics } from './metrics.ts';
import type { ProfileStore } from '../queue/profile-store.ts';
import type { AnalysisQueue } from '../queue/queues.ts';
import type { JobsRepository } from '../queue/jobs-repository.ts';
import type { ServiceStores } from '../queue/store.ts';
import type { Storage } from '../storage/index.ts';

export interface AppDeps {
  redis: Redis;
  queue: AnalysisQueue;
  store: ServiceStores;
  jobs: JobsRepository;
  profiles: ProfileStore;
  storage: Storage;
  policy: UrlPolicy;
  /** This API process's Prometheus figures. */
  metrics: ApiMetrics;
}
