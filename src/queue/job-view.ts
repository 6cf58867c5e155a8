// A BullMQ job as clients see it (GET /v1/jobs/:id, listings, webhook bodies). BullMQ's
// states fold into four: waiting, delayed (retry backoff) and prioritized are all "queued".

import type { Job } from 'bullmq';
import { decodeFailure, type AnalyzeJobV1, type AnalyzeResultV1 } from './contract.ts';
import type { DeliveryAttempt } from './deliveries.ts';
import type { SignOff } from './signoffs.ts';

export type JobState = 'queued' | 'active' | 'completed' | 'failed';

export interface JobView {
  id: string;
  state: JobState;
  progressPercent: number;
  createdAt: string;
  startedAt: string | null;
  finishedAt: string | null;
  attemptsMade: number;
  profile: { id: string; version: string };
  source: { kind: 'upload'; fileName: string; sizeBytes: number } | { kind: 'url'; url: string };
  externalId: string | null;
  metadata: Record<string, string> | null;
  verdict: 'pass' | 'warn' | 'fail' | null;
  /** The report's first line ("Damaged: audio ends at …"), so a listing shows why without the report. */
  headline: string | null;
  /** Headline readings of a completed job. */
  summary: { integratedLufs: number | null; truePeakDbtp: number | null } | null;
  error: { code: string; message: string } | null;
  callback: { url: string; deliveries: DeliveryAttempt[] } | null;
  links: { self: string; report: string | null };
  /** The job whose stored audio this one re-ran (only on re-runs). */
  rerunOf?: string;
  /** GET /v1/jobs/:id only: the re-runs of this job. */
  reruns?: string[];
  /** The operator's current sign-off: GET /v1/jobs/:id (null when none) and the listing (only when one). */
  signOff?: SignOff | null;
}

export function stateOf(raw: string): JobState {
  if (raw === 'active' || raw === 'completed' || raw === 'failed') return raw;
  return 'queued';
}

const iso = (ms: number | undefined) => (ms ? new Date(ms).toISOString() : null);

export function jobView(
  job: Job<AnalyzeJobV1, AnalyzeResultV1>,
  rawState: string,
  deliveries: DeliveryAttempt[],
): JobView {
  const state = stateOf(rawState);
  const data = job.data;
  const result = state === 'completed' ? (job.returnvalue as AnalyzeResultV1 | null) : null;
  const progress = typeof job.progress === 'number' ? job.progress : 0;
  const id = String(job.id);
  return {
    id,
    state,
    progressPercent: state === 'completed' ? 100 : Math.max(0, Math.min(100, Math.round(progress))),
    createdAt: new Date(job.timestamp).toISOString(),
    startedAt: iso(job.processedOn),
    finishedAt: state === 'completed' || state === 'failed' ? iso(job.finishedOn) : null,
    attemptsMade: job.attemptsMade,
    profile: { id: data.profileId, version: data.profileVersion },
    source:
      data.source.kind === 'upload'
        ? { kind: 'upload', fileName: data.source.fileName, sizeBytes: data.source.sizeBytes }
        : { kind: 'url', url: data.source.url },
    externalId: data.externalId,
    metadata: data.metadata,
    verdict: result?.verdict ?? null,
    headline: result?.headline ?? null,
    summary: result
      ? { integratedLufs: result.integratedLufs ?? null, truePeakDbtp: result.truePeakDbtp ?? null }
      : null,
    error: state === 'failed' ? decodeFailure(job.failedReason) : null,
    callback: data.callbackUrl ? { url: data.callbackUrl, deliveries } : null,
    links: { self: `/v1/jobs/${id}`, report: state === 'completed' ? `/v1/jobs/${id}/report` : null },
    ...(data.rerunOf ? { rerunOf: data.rerunOf } : {}),
  };
}
