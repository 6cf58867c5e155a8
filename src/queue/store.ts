// The service's state beside the BullMQ queues, one store per concern: each tenant's job index,
// idempotency keys, cached reports, webhook delivery attempts, job outcomes, the fair-share clock,
// operator sign-offs, re-run links and delivery packages.

import type { Redis } from 'ioredis';
import { DeliveryLog } from './deliveries.ts';
import { FairShare } from './fair-share.ts';
import { DirectUploads } from './direct-uploads.ts';
import { IdempotencyKeys } from './idempotency.ts';
import { JobIndex } from './job-index.ts';
import { Outcomes } from './outcomes.ts';
import { PackageStore } from './packages.ts';
import { ReportCache } from './report-cache.ts';
import { RerunLog } from './reruns.ts';
import { SignOffLog } from './signoffs.ts';

export interface ServiceStores {
  index: JobIndex;
  idempotency: IdempotencyKeys;
  reports: ReportCache;
  deliveries: DeliveryLog;
  outcomes: Outcomes;
  fairShare: FairShare;
  uploads: DirectUploads;
  signOffs: SignOffLog;
  reruns: RerunLog;
  packages: PackageStore;
}

export function openServiceStores(redis: Redis, prefix: string, retentionSeconds: number): ServiceStores {
  return {
    index: new JobIndex(redis, prefix, retentionSeconds),
    idempotency: new IdempotencyKeys(redis, prefix, retentionSeconds),
    reports: new ReportCache(redis, prefix, retentionSeconds),
    deliveries: new DeliveryLog(redis, prefix, retentionSeconds),
    outcomes: new Outcomes(redis, prefix, retentionSeconds),
    fairShare: new FairShare(redis, prefix),
    uploads: new DirectUploads(redis, prefix, retentionSeconds),
    signOffs: new SignOffLog(redis, prefix, retentionSeconds),
    reruns: new RerunLog(redis, prefix, retentionSeconds),
    packages: new PackageStore(redis, prefix, retentionSeconds),
  };
}
