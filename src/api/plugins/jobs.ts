// Job routes: submit (multipart upload or JSON sourceUrl), status, report, listing, queue.

import { Ajv } from 'ajv';
import type { FromSchema } from 'json-schema-to-ts';
import { EarmarkError } from '../../errors/index.ts';
import { bullKeys, type IndexCursor } from '../../queue/job-index.ts';
import type { SignOff } from '../../queue/signoffs.ts';
import type { AppDeps } from '../deps.ts';
import { submitRange } from '../list-filters.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { idempotencyKeyOf, replySubmitted, submitDirectUpload, submitJob } from '../submit.ts';
import { readMultipart } from '../upload-form.ts';
import { validationProblem } from '../validation.ts';
import { principalOf, requireScope } from './auth.ts';

const idempotencyHeader = {
  'Idempotency-Key': {
    description: 'Repeat a submission safely: the same key returns the job made the first time.',
    schema: { type: 'string', maxLength: 200 },
  },
};

export const jobSpecs = {
  submit: {
    method: 'POST',
    url: '/v1/jobs',
    operationId: 'submitJob',
    tag: 'jobs',
    scope: 'submit',
    summary: 'Submit a file (multipart upload) or a sourceUrl (JSON) for QC against a profile',
    body: { 'application/json': S.SubmitJson, 'multipart/form-data': S.SubmitMultipart },
    headers: idempotencyHeader,
    responses: {
      202: { description: 'Queued', schema: S.JobAccepted, headers: { Location: 'The job status URL' } },
      200: { description: 'Already submitted with this Idempotency-Key', schema: S.JobAccepted },
      ...S.problems(400, 401, 403, 404, 409, 413, 415, 422, 503, 507),
    },
  },
  get: {
    method: 'GET',
    url: '/v1/jobs/:id',
    operationId: 'getJob',
    tag: 'jobs',
    scope: 'read',
    summary: 'Job state, progress, verdict and webhook deliveries',
    params: S.JobIdParams,
    responses: { 200: { description: 'The job', schema: S.Job }, ...S.problems(400, 401, 403, 404, 503) },
  },
  report: {
    method: 'GET',
    url: '/v1/jobs/:id/report',
    operationId: 'getJobReport',
    tag: 'jobs',
    scope: 'read',
    summary: 'The QC report of a completed job',
    params: S.JobIdParams,
    responses: {
      200: { description: 'The report (with the current sign-off, if any)', schema: S.ServedReport },
      ...S.problems(400, 401, 403, 404, 409, 503),
    },
  },
  list: {
    method: 'GET',
    url: '/v1/jobs',
    operationId: 'listJobs',
    tag: 'jobs',
    scope: 'read',
    summary:
      "The tenant's jobs, newest first, with cursor pagination; filters by state, verdict, profile, search (q) and submit time",
    querystring: S.ListJobsQuery,
    responses: { 200: { description: 'A page of jobs', schema: S.JobList }, ...S.problems(400, 401, 403, 503) },
  },
  queue: {
    method: 'GET',
    url: '/v1/queue',
    operationId: 'getQueue',
    tag: 'jobs',
    scope: 'read',
    summary:
      "The tenant's queue counts (every tenant's with view=all and the operator scope), workers seen and jobs finished in the last minute",
    querystring: S.ViewQuery,
    responses: { 200: { description: 'Queue status', schema: S.QueueStatus }, ...S.problems(400, 401, 403, 503) },
  },
} satisfies Record<string, RouteSpec>;

const validateJson = new Ajv({ allErrors: false }).compile<FromSchema<typeof S.SubmitJson>>(S.SubmitJson);

const encodeCursor = (c: IndexCursor) => Buffer.from(`${c.scoreMs}:${c.id}`).toString('base64url');
function decodeCursor(raw: string): IndexCursor {
  const match = /^(\d+):(j_[a-z0-9]+)$/.exec(Buffer.from(raw, 'base64url').toString());
  if (!match) throw new EarmarkError('validation_failed', 'cursor is not one this API gave out', { field: 'cursor' });
  return { scoreMs: Number(match[1]), id: match[2] };
}

/** The stored report text with the current sign-off as one more member: the stored bytes and their
 * numbers are served as written, never parsed and written again. */
function withSignOff(json: string, signOff: SignOff | null): string {
  const end = json.lastIndexOf('}');
  if (!signOff || end < 0) return json;
  return `${json.slice(0, end)},"signOff":${JSON.stringify(signOff)}${json.slice(end)}`;
}

export function jobsPlugin(deps: AppDeps, uploadLimitBytes: number, bodyTimeoutMs = 60_000) {
  // Shorter than the idle timeout, so a stalled over-limit upload hears 413, not 408.
  const drainIdleMs = Math.min(5_000, Math.floor(bodyTimeoutMs / 2));
  return routesPlugin(
    'earmark-jobs',
    async (app) => {
      route(app, jobSpecs.submit, async (request, reply) => {
        const { tenant } = principalOf(request);
        const idempotencyKey = idempotencyKeyOf(request);
        let result: Awaited<ReturnType<typeof submitJob>>;
        if (request.isMultipart()) {
          const { stored, fileName, input } = await readMultipart(deps, request, uploadLimitBytes, drainIdleMs);
          try {
            result = await submitJob(
              deps,
              tenant,
              input,
              { kind: 'upload', storageKey: stored.key, fileName, sizeBytes: stored.sizeBytes, sha256: stored.sha256 },
              idempotencyKey,
            );
          } catch (error) {
            await deps.storage.remove(stored.key).catch(() => undefined);
            throw error;
          }
          if (result.duplicate) await deps.storage.remove(stored.key).catch(() => undefined);
        } else {
          const body = request.body;
          if (!validateJson(body)) throw validationProblem(validateJson.errors, 'body');
          const { sourceUrl, uploadId, ...input } = body;
          if (uploadId !== undefined && sourceUrl !== undefined)
            throw new EarmarkError('validation_failed', 'give sourceUrl or uploadId, not both', { field: 'uploadId' });
          if (uploadId !== undefined) {
            result = await submitDirectUpload(deps, tenant, uploadId, input, idempotencyKey);
          } else {
            if (sourceUrl === undefined)
              throw new EarmarkError('validation_failed', 'sourceUrl (or uploadId, or a multipart file) is required', {
                field: 'sourceUrl',
              });
            result = await submitJob(deps, tenant, input, { kind: 'url', url: sourceUrl }, idempotencyKey);
          }
        }
        request.log.info({ jobId: result.id, duplicate: result.duplicate }, 'job submitted');
        return replySubmitted(deps, tenant, reply, result);
      });

      // The one view that also lists re-runs and the current sign-off (two reads a listing skips).
      route(app, jobSpecs.get, async (request) => {
        const { id } = request.params;
        const view = await deps.jobs.view(principalOf(request).tenant, id);
        const [reruns, signOff] = await Promise.all([deps.store.reruns.list(id), deps.store.signOffs.current(id)]);
        return { ...view, reruns, signOff };
      });

      route(app, jobSpecs.report, async (request, reply) => {
        const { id } = request.params;
        const json = await deps.jobs.report(principalOf(request).tenant, id);
        return reply.type('application/json').send(withSignOff(json, await deps.store.signOffs.current(id)));
      });

      route(app, jobSpecs.list, async (request) => {
        const { cursor, q, submittedFrom, submittedTo, ...filters } = request.query;
        const page = await deps.jobs.list(principalOf(request).tenant, {
          ...filters,
          search: q,
          submitted: submitRange(submittedFrom, submittedTo),
          cursor: cursor ? decodeCursor(cursor) : null,
        });
        // The current sign-offs of the page's jobs in one pipelined read, so the list can show them.
        const signOffs = await deps.store.signOffs.currentOf(page.items.map((item) => item.id));
        const items = page.items.map((item) => {
          const signOff = signOffs.get(item.id);
          return signOff ? { ...item, signOff } : item;
        });
        return { items, nextCursor: page.next ? encodeCursor(page.next) : null };
      });

      route(app, jobSpecs.queue, async (request) => {
        const principal = principalOf(request);
        const { view } = request.query;
        const workers = (await deps.queue.getWorkers()).length;
        const since = Date.now() - 60_000;
        if (view === 'all') {
          requireScope(principal, 'operator');
          const counts = await deps.queue.getJobCounts(
            'waiting',
            'active',
            'delayed',
            'completed',
            'failed',
            'prioritized',
          );
          return {
            view,
            waiting: (counts.waiting ?? 0) + (counts.prioritized ?? 0),
            active: counts.active ?? 0,
            delayed: counts.delayed ?? 0,
            completed: counts.completed ?? 0,
            failed: counts.failed ?? 0,
            workers,
            finishedLastMinute: await deps.store.outcomes.finishedSince(since),
          };
        }
        const c = await deps.store.index.counts(principal.tenant, bullKeys(deps.queue), since);
        return {
          view,
          waiting: c.waiting + c.prioritized,
          active: c.active,
          delayed: c.delayed,
          completed: c.completed,
          failed: c.failed,
          workers,
          finishedLastMinute: c.finishedSince,
        };
      });
    },
    ['@fastify/multipart'],
  );
}
