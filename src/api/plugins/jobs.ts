// Job routes: submit (multipart upload or JSON sourceUrl), status, report, listing, queue.

import { Ajv } from 'ajv';
import type { FastifyRequest } from 'fastify';
import type { FromSchema } from 'json-schema-to-ts';
import type { IncomingMessage } from 'node:http';
import { EarmarkError } from '../../errors/index.ts';
import { bullKeys, type IndexCursor } from '../../queue/job-index.ts';
import type { StoredFile } from '../../storage/index.ts';
import type { AppDeps } from '../deps.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { submitJob, type SubmitInput } from '../submit.ts';
import { validationProblem, poisonKeyOf } from '../validation.ts';
import { principalOf, requireScope } from './auth.ts';

const idempotencyHeader = { 'Idempotency-Key': { description: 'Repeat a submission safely: the same key returns the job made the first time.', schema: { type: 'string', maxLength: 200 } } };

export const jobSpecs = {
  submit: {
    method: 'POST', url: '/v1/jobs', operationId: 'submitJob', tag: 'jobs', scope: 'submit',
    summary: 'Submit a file (multipart upload) or a sourceUrl (JSON) for QC against a profile',
    body: { 'application/json': S.SubmitJson, 'multipart/form-data': S.SubmitMultipart },
    headers: idempotencyHeader,
    responses: {
      202: { description: 'Queued', schema: S.JobAccepted, headers: { Location: 'The job status URL' } },
      200: { description: 'Already submitted with this Idempotency-Key', schema: S.JobAccepted },
      ...S.problems(400, 401, 403, 409, 413, 415, 422, 503, 507),
    },
  },
  get: {
    method: 'GET', url: '/v1/jobs/:id', operationId: 'getJob', tag: 'jobs', scope: 'read', summary: 'Job state, progress, verdict and webhook deliveries',
    params: S.JobIdParams, responses: { 200: { description: 'The job', schema: S.Job }, ...S.problems(400, 401, 403, 404, 503) },
  },
  report: {
    method: 'GET', url: '/v1/jobs/:id/report', operationId: 'getJobReport', tag: 'jobs', scope: 'read', summary: 'The QC report of a completed job',
    params: S.JobIdParams, responses: { 200: { description: 'The report', schema: S.Report }, ...S.problems(400, 401, 403, 404, 409, 503) },
  },
  list: {
    method: 'GET', url: '/v1/jobs', operationId: 'listJobs', tag: 'jobs', scope: 'read', summary: 'The tenant\'s jobs, newest first, with cursor pagination',
    querystring: S.ListJobsQuery, responses: { 200: { description: 'A page of jobs', schema: S.JobList }, ...S.problems(400, 401, 403, 503) },
  },
  queue: {
    method: 'GET', url: '/v1/queue', operationId: 'getQueue', tag: 'jobs', scope: 'read',
    summary: 'The tenant\'s queue counts (every tenant\'s with view=all and the operator scope), workers seen and jobs finished in the last minute',
    querystring: S.ViewQuery, responses: { 200: { description: 'Queue status', schema: S.QueueStatus }, ...S.problems(400, 401, 403, 503) },
  },
} satisfies Record<string, RouteSpec>;

const ajv = new Ajv({ allErrors: false });
const validateJson = ajv.compile<FromSchema<typeof S.SubmitJson>>(S.SubmitJson);
/** A form's fields: the JSON body's rules, with the file in place of sourceUrl. */
const { sourceUrl: _sourceUrl, ...formProperties } = S.SubmitJson.properties;
const SubmitFields = { ...S.SubmitJson, required: ['profile'], properties: formProperties } as const;
const validateFields = ajv.compile<FromSchema<typeof SubmitFields>>({ ...SubmitFields, properties: { ...formProperties, sourceUrl: false } });

const MAX_FIELDS = 10;

const cleanName = (name: string | undefined) => (name ?? 'upload').replace(/[^\w .()-]/g, '_').slice(0, 200) || 'upload';

/** Room for the form's other parts and boundaries on top of the file's limit. */
const FORM_SLACK_BYTES = 1024 * 1024;

/** The whole multipart body is bounded too: an endless one (chunked, never terminated) whose
 * bytes are not a file part (a huge preamble or field) would otherwise be read for ever. */
function bodyBudget(request: FastifyRequest, maxBytes: number): { exceeded: Promise<never>; stop(): void } {
  let received = 0;
  let fail: (error: EarmarkError) => void = () => undefined;
  const exceeded = new Promise<never>((_resolve, reject) => { fail = reject; });
  exceeded.catch(() => undefined);
  const onData = (chunk: Buffer) => {
    received += chunk.length;
    if (received > maxBytes) {
      request.raw.off('data', onData);
      fail(new EarmarkError('payload_too_large', `the request body is larger than ${maxBytes} bytes`, { limitBytes: maxBytes }));
    }
  };
  // Added after parts() has piped the body into the parser, so no byte is missed by either.
  request.raw.on('data', onData);
  return { exceeded, stop: () => request.raw.off('data', onData) };
}

const DRAIN_BEFORE_ANSWER_BYTES = 8 * 1024 * 1024;

/** Reads and drops the rest of a refused body, up to maxBytes and while it keeps coming: a
 * client that stalls gets its answer after idleMs all the same. */
function drainBeforeAnswer(raw: IncomingMessage, maxBytes: number, idleMs: number): Promise<void> {
  return new Promise((resolve) => {
    if (raw.complete || raw.destroyed) { resolve(); return; }
    let drained = 0;
    const done = () => {
      clearTimeout(timer);
      raw.off('data', onData).off('end', done).off('close', done);
      raw.pause();
      resolve();
    };
    const onData = (chunk: Buffer) => {
      drained += chunk.length;
      if (drained > maxBytes) done();
      else timer.refresh();
    };
    const timer = setTimeout(done, idleMs);
    raw.on('data', onData).once('end', done).once('close', done);
    raw.resume();
  });
}

async function readMultipart(deps: AppDeps, request: FastifyRequest, limitBytes: number, drainIdleMs: number): Promise<{ stored: StoredFile; fileName: string; input: SubmitInput }> {
  let stored: StoredFile | null = null;
  let fileName = 'upload';
  let problem: EarmarkError | null = null;
  const fields: Record<string, string> = {};
  // Without a boundary the parser cannot start; say so instead of a parser error.
  if (!/;\s*boundary=/i.test(String(request.headers['content-type'] ?? ''))) {
    throw new EarmarkError('validation_failed', 'multipart/form-data needs a boundary parameter', { field: 'content-type' });
  }
  const parts = request.parts()[Symbol.asyncIterator]();
  const budget = bodyBudget(request, limitBytes + FORM_SLACK_BYTES);
  try {
    for (;;) {
      const next = await Promise.race([parts.next(), budget.exceeded]);
      if (next.done) break;
      const part = next.value;
      if (part.type === 'file') {
        const file = part;
        if (file.fieldname !== 'file' || stored || problem) {
          file.file.resume();
          problem ??= new EarmarkError('validation_failed', 'send exactly one file part, named "file"', { field: file.fieldname });
          continue;
        }
        // A refused or failed store is answered after the rest of the body is read (no reset).
        stored = await deps.storage.saveUpload(file.file, limitBytes, () => file.file.truncated).catch((error: unknown) => {
          problem ??= error instanceof EarmarkError ? error : new EarmarkError('storage_unavailable', 'the upload could not be stored');
          return null;
        });
        // Over the limit: answer now rather than read a body that may never end.
        const refused = problem as EarmarkError | null;
        if (refused?.code === 'payload_too_large') throw refused;
        fileName = cleanName(file.filename);
      } else if (Object.keys(fields).length >= MAX_FIELDS) {
        problem ??= new EarmarkError('validation_failed', `the form has more than ${MAX_FIELDS} fields`, { field: part.fieldname });
      } else {
        fields[part.fieldname] = String(part.value);
      }
    }
    if (problem) throw problem;
    if (!stored) throw new EarmarkError('validation_failed', 'the multipart body has no "file" part', { field: 'file' });
    const input: Record<string, unknown> = { ...fields };
    if (fields.metadata !== undefined) {
      try { input.metadata = JSON.parse(fields.metadata); } catch { throw new EarmarkError('validation_failed', 'metadata is not valid JSON', { field: 'metadata' }); }
      // The JSON body parser's rule, stricter: metadata is a flat map of strings.
      const poison = poisonKeyOf(input.metadata, true);
      if (poison) throw new EarmarkError('validation_failed', `metadata has a "${poison}" key, which is not allowed`, { field: `metadata.${poison}` });
    }
    if (!validateFields(input)) throw validationProblem(validateFields.errors, 'body');
    return { stored, fileName, input };
  } catch (error) {
    if (stored) await deps.storage.remove(stored.key).catch(() => undefined);
    if (error instanceof EarmarkError && error.code === 'payload_too_large') {
      request.raw.unpipe();
      // A declared body a little over the limit is read to its end first: most clients read the
      // answer only once they have sent everything. An endless or far larger one is answered now.
      const declared = Number(request.headers['content-length'] ?? NaN);
      if (declared <= limitBytes + FORM_SLACK_BYTES + DRAIN_BEFORE_ANSWER_BYTES) await drainBeforeAnswer(request.raw, DRAIN_BEFORE_ANSWER_BYTES, drainIdleMs);
    } else {
      // A multipart limit stops the parser mid-body: read the rest (bounded by the idle and
      // request timeouts) so the client gets the answer instead of a broken pipe.
      request.raw.resume();
    }
    throw error;
  } finally {
    budget.stop();
  }
}

const encodeCursor = (c: IndexCursor) => Buffer.from(`${c.scoreMs}:${c.id}`).toString('base64url');
function decodeCursor(raw: string): IndexCursor {
  const match = /^(\d+):(j_[a-z0-9]+)$/.exec(Buffer.from(raw, 'base64url').toString());
  if (!match) throw new EarmarkError('validation_failed', 'cursor is not one this API gave out', { field: 'cursor' });
  return { scoreMs: Number(match[1]), id: match[2] };
}

export function jobsPlugin(deps: AppDeps, uploadLimitBytes: number, bodyTimeoutMs = 60_000) {
  // Shorter than the idle timeout, so a stalled over-limit upload hears 413, not 408.
  const drainIdleMs = Math.min(5_000, Math.floor(bodyTimeoutMs / 2));
  return routesPlugin('earmark-jobs', async (app) => {
    route(app, jobSpecs.submit, async (request, reply) => {
      const { tenant } = principalOf(request);
      const idempotencyKey = typeof request.headers['idempotency-key'] === 'string' ? request.headers['idempotency-key'].slice(0, 200) : undefined;
      let result;
      if (request.isMultipart()) {
        const { stored, fileName, input } = await readMultipart(deps, request, uploadLimitBytes, drainIdleMs);
        try {
          result = await submitJob(deps, tenant, input, { kind: 'upload', storageKey: stored.key, fileName, sizeBytes: stored.sizeBytes, sha256: stored.sha256 }, idempotencyKey);
        } catch (error) {
          await deps.storage.remove(stored.key).catch(() => undefined);
          throw error;
        }
        if (result.duplicate) await deps.storage.remove(stored.key).catch(() => undefined);
      } else {
        const body = request.body;
        if (!validateJson(body)) throw validationProblem(validateJson.errors, 'body');
        const { sourceUrl, ...input } = body;
        result = await submitJob(deps, tenant, input, { kind: 'url', url: sourceUrl }, idempotencyKey);
      }
      request.log.info({ jobId: result.id, duplicate: result.duplicate }, 'job submitted');
      if (!result.duplicate) deps.metrics.jobSubmitted(tenant);
      const statusUrl = `/v1/jobs/${result.id}`;
      const state = result.duplicate ? (await deps.jobs.stateOf(tenant, result.id)) ?? 'queued' : 'queued';
      return reply.code(result.duplicate ? 200 : 202).header('location', statusUrl).send({ id: result.id, state, statusUrl, duplicate: result.duplicate });
    });

    route(app, jobSpecs.get, async (request) => deps.jobs.view(principalOf(request).tenant, request.params.id));

    route(app, jobSpecs.report, async (request, reply) =>
      reply.type('application/json').send(await deps.jobs.report(principalOf(request).tenant, request.params.id)));

    route(app, jobSpecs.list, async (request) => {
      const { cursor, ...filters } = request.query;
      const page = await deps.jobs.list(principalOf(request).tenant, { ...filters, cursor: cursor ? decodeCursor(cursor) : null });
      return { items: page.items, nextCursor: page.next ? encodeCursor(page.next) : null };
    });

    route(app, jobSpecs.queue, async (request) => {
      const principal = principalOf(request);
      const { view } = request.query;
      const workers = (await deps.queue.getWorkers()).length;
      const since = Date.now() - 60_000;
      if (view === 'all') {
        requireScope(principal, 'operator');
        const counts = await deps.queue.getJobCounts('waiting', 'active', 'delayed', 'completed', 'failed', 'prioritized');
        return {
          view, waiting: (counts.waiting ?? 0) + (counts.prioritized ?? 0), active: counts.active ?? 0, delayed: counts.delayed ?? 0,
          completed: counts.completed ?? 0, failed: counts.failed ?? 0, workers, finishedLastMinute: await deps.store.outcomes.finishedSince(since),
        };
      }
      const c = await deps.store.index.counts(principal.tenant, bullKeys(deps.queue), since);
      return {
        view, waiting: c.waiting + c.prioritized, active: c.active, delayed: c.delayed,
        completed: c.completed, failed: c.failed, workers, finishedLastMinute: c.finishedSince,
      };
    });
  }, ['@fastify/multipart']);
}
