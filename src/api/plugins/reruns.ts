// Re-run route: a finished job's stored audio checked again as a new job (src/api/rerun.ts).

import { Ajv } from 'ajv';
import type { FromSchema } from 'json-schema-to-ts';
import type { AppDeps } from '../deps.ts';
import { rerunJob } from '../rerun.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import { idempotencyKeyOf, replySubmitted } from '../submit.ts';
import * as S from '../schemas.ts';
import { validationProblem } from '../validation.ts';
import { principalOf } from './auth.ts';

export const rerunSpecs = {
  rerun: {
    method: 'POST',
    url: '/v1/jobs/:id/reruns',
    operationId: 'rerunJob',
    tag: 'jobs',
    scope: 'submit',
    summary:
      "Check a finished job's stored audio again, against another profile or profile version, as a new job (no upload)",
    params: S.JobIdParams,
    body: { 'application/json': S.RerunJson },
    headers: {
      'Idempotency-Key': {
        description: 'Repeat a re-run safely: the same key returns the job made the first time.',
        schema: { type: 'string', maxLength: 200 },
      },
    },
    responses: {
      202: { description: 'Queued', schema: S.JobAccepted, headers: { Location: 'The new job status URL' } },
      200: { description: 'Already made with this Idempotency-Key', schema: S.JobAccepted },
      ...S.problems(400, 401, 403, 404, 409, 415, 422, 503),
    },
  },
} satisfies Record<string, RouteSpec>;

const validateRerun = new Ajv({ allErrors: false }).compile<FromSchema<typeof S.RerunJson>>(S.RerunJson);

export function rerunsPlugin(deps: AppDeps) {
  return routesPlugin('earmark-reruns', async (app) => {
    route(app, rerunSpecs.rerun, async (request, reply) => {
      const { tenant } = principalOf(request);
      const body = request.body;
      if (!validateRerun(body)) throw validationProblem(validateRerun.errors, 'body');
      const result = await rerunJob(deps, tenant, request.params.id, body, idempotencyKeyOf(request));
      request.log.info({ jobId: result.id, rerunOf: request.params.id, duplicate: result.duplicate }, 'job re-run');
      return replySubmitted(deps, tenant, reply, result);
    });
  });
}
