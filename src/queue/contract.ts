// The job contract between API and workers. Payloads are versioned through the job name:
// a worker only takes names it knows, so an old worker never misreads a new payload.
// Job data holds a storage key or URL, never audio.

import { isErrorCode, parseWireError, type ErrorCode, type ErrorDetails, type WireError } from '../errors/index.ts';
import type { Profile } from '../profiles/index.ts';
import type { PackageEvent } from './package-contract.ts';

export const ANALYSIS_QUEUE = 'analysis';
export const WEBHOOK_QUEUE = 'webhooks';
export const ANALYZE_JOB_V1 = 'analyze.v1';
export const DELIVER_WEBHOOK_V1 = 'deliver.v1';

export type JobSource =
  /** sha256 is the API's hash of the stored bytes, so the worker does not read them twice (absent in older jobs). */
  | { kind: 'upload'; storageKey: string; fileName: string; sizeBytes: number; sha256?: string }
  | { kind: 'url'; url: string };

export interface AnalyzeJobV1 {
  tenant: string;
  source: JobSource;
  profileId: string;
  profileVersion: string;
  /**
   * The exact profile version, frozen at submit: versions never change once written, and the
   * sandboxed child then needs no Redis connection of its own.
   */
  profile: Profile;
  callbackUrl: string | null;
  externalId: string | null;
  metadata: Record<string, string> | null;
  submittedAt: string;
  /** The job this one re-runs over the same stored audio (absent on first runs). */
  rerunOf?: string;
}

export interface AnalyzeResultV1 {
  verdict: 'pass' | 'warn' | 'fail';
  reportKey: string;
  analysisSeconds: number;
  /** Headline readings, so listings need not load reports. */
  integratedLufs: number | null;
  truePeakDbtp: number | null;
  /** The report's first line (report v2); absent in results written before it. */
  headline?: string;
  /** Storage key of the analysed audio (upload or fetched copy), kept until retention for excerpts. */
  sourceKey: string;
}

/** job.signed_off is sent by the API when an operator signs off a verdict (src/api/signoff.ts). */
export type JobEvent = 'job.completed' | 'job.failed' | 'job.signed_off';

export interface DeliverWebhookV1 {
  /** The job's id, or a package's (package events, src/worker/package-worker.ts). */
  jobId: string;
  tenant: string;
  url: string;
  event: JobEvent | PackageEvent;
  /** Same on every retry, so a receiver can drop duplicates. */
  deliveryId: string;
  body: string;
}

/** failedReason (BullMQ keeps only a string) carries the WireError as JSON, so the API shows a stable code. */
export function encodeFailure(code: ErrorCode, message: string, details: ErrorDetails = {}): string {
  try {
    return JSON.stringify({ code, message, details } satisfies WireError);
  } catch {
    // Details JSON cannot hold (a BigInt, a cycle) are dropped, never the code.
    return JSON.stringify({ code, message, details: {} } satisfies WireError);
  }
}

function parseJson(text: string): unknown {
  try {
    return JSON.parse(text);
  } catch {
    return null;
  }
}

/** The plain "code: message" form, which failed jobs kept in Redis may hold. */
const PLAIN_REASON = /^([a-z][a-z_]*): ([\s\S]*)$/;

/** The WireError in a failedReason, JSON or the plain form; anything else is internal_error. */
export function decodeFailureError(reason: string | undefined): WireError {
  const text = reason ?? '';
  if (text.startsWith('{')) {
    const wire = parseWireError(parseJson(text));
    if (wire) return wire;
  }
  const plain = PLAIN_REASON.exec(text);
  if (plain && isErrorCode(plain[1])) return { code: plain[1], message: plain[2], details: {} };
  // A crash of the child (OOM, signal) or a stall has no code of ours; keep BullMQ's words, minus anything path-like.
  const said = text.replace(/\S*[/\\]\S*/g, '…').slice(0, 200);
  return {
    code: 'internal_error',
    message: `the analysis process ended unexpectedly${said ? ` (${said})` : ''}`,
    details: {},
  };
}

/** What the job view shows of a failure: its code and words. */
export function decodeFailure(reason: string | undefined): { code: string; message: string } {
  const { code, message } = decodeFailureError(reason);
  return { code, message };
}
