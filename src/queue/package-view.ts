// A package as clients see it (GET /v1/packages/:id and its webhook bodies): the request, its
// state, each member's own job state and verdict, and once checked the set checks, the residual
// and the package verdict.

import type { SetCheck, SetMember, PackageRole } from '../engine/package-set.ts';
import type { PackageReport, PackageResidualSpan } from '../packages/check-package.ts';
import type { Verdict } from '../profiles/index.ts';
import type { ResidualChannel } from '../analysis/stem-residual.ts';
import type { DeliveryAttempt } from './deliveries.ts';
import type { AnalysisJob, LoadedJob } from './jobs-repository.ts';
import { stateOf, type JobState } from './job-view.ts';
import type { CheckPackageJobV1, CheckPackageResultV1 } from './package-contract.ts';

export interface PackageMemberView {
  jobId: string;
  role: PackageRole;
  /** null once the job is gone (past its retention period). */
  fileName: string | null;
  state: JobState | 'gone';
  /** The member's own verdict, from its own job's report. */
  verdict: Verdict | null;
  headline: string | null;
}

export interface PackageResidualView {
  frames: number;
  toleranceDb: number;
  mixRmsDbfs: number | null;
  residualRmsDbfs: number | null;
  residualRelativeDb: number | null;
  residualPeakDbfs: number | null;
  withinTolerance: boolean;
  spansTotal: number;
  channels: ResidualChannel[];
}

export interface PackageView {
  id: string;
  state: JobState;
  createdAt: string;
  finishedAt: string | null;
  profile: string;
  stemProfile: string | null;
  toleranceDb: number;
  externalId: string | null;
  members: PackageMemberView[];
  verdict: Verdict | null;
  headline: string | null;
  set: { members: SetMember[]; checks: SetCheck[]; residualSkipped: string | null } | null;
  residual: PackageResidualView | null;
  /** Where the stems' sum leaves the mix by more than the tolerance (up to the engine's cap). */
  residualSpans: PackageResidualSpan[];
  error: { code: string; message: string } | null;
  callback: { url: string; deliveries: DeliveryAttempt[] } | null;
  links: { self: string; report: string | null };
}

export interface PackageOutcome {
  result: CheckPackageResultV1 | null;
  report: PackageReport | null;
  finishedAtMs: number | null;
  error: { code: string; message: string } | null;
  /** The member jobs as read now; null: not read (each shows only its id and role). */
  members: Map<string, LoadedJob> | null;
  /** Webhook attempts for this package so far. */
  deliveries: DeliveryAttempt[];
}

/** The name a member's file goes by: its upload's name, or the last part of its URL. */
export function memberFileName(job: AnalysisJob): string {
  const { source } = job.data;
  if (source.kind === 'upload') return source.fileName;
  try {
    return decodeURIComponent(new URL(source.url).pathname.split('/').pop() || 'source');
  } catch {
    return 'source';
  }
}

export function packageView(record: CheckPackageJobV1, rawState: string, outcome: PackageOutcome): PackageView {
  const state = stateOf(rawState);
  const report = state === 'completed' ? outcome.report : null;
  const r = report?.set.residual ?? null;
  return {
    id: record.packageId,
    state,
    createdAt: record.submittedAt,
    finishedAt:
      (state === 'completed' || state === 'failed') && outcome.finishedAtMs
        ? new Date(outcome.finishedAtMs).toISOString()
        : null,
    profile: record.profile,
    stemProfile: record.stemProfile,
    toleranceDb: record.toleranceDb,
    externalId: record.externalId,
    members: record.members.map(({ jobId, role }) => {
      const loaded = outcome.members?.get(jobId);
      if (!loaded) return { jobId, role, fileName: null, state: 'gone', verdict: null, headline: null };
      const finished = loaded.state === 'completed' ? loaded.job.returnvalue : null;
      return {
        jobId,
        role,
        fileName: memberFileName(loaded.job),
        state: loaded.state,
        verdict: finished?.verdict ?? null,
        headline: finished?.headline ?? null,
      };
    }),
    verdict: state === 'completed' ? (outcome.result?.verdict ?? null) : null,
    headline: state === 'completed' ? (outcome.result?.headline ?? null) : null,
    set: report
      ? { members: report.set.members, checks: report.set.checks, residualSkipped: report.set.residualSkipped }
      : null,
    residual: r
      ? {
          frames: r.frames,
          toleranceDb: r.toleranceDb,
          mixRmsDbfs: r.mixRmsDbfs,
          residualRmsDbfs: r.residualRmsDbfs,
          residualRelativeDb: r.residualRelativeDb,
          residualPeakDbfs: r.residualPeakDbfs,
          withinTolerance: r.withinTolerance,
          spansTotal: r.spansTotal,
          channels: r.channels,
        }
      : null,
    residualSpans: report?.residualSpans ?? [],
    error: state === 'failed' ? outcome.error : null,
    callback: record.callbackUrl ? { url: record.callbackUrl, deliveries: outcome.deliveries } : null,
    links: {
      self: `/v1/packages/${record.packageId}`,
      report: state === 'completed' ? `/v1/packages/${record.packageId}/report` : null,
    },
  };
}
