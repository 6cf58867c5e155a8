// Sign-off routes: an operator accepts or rejects a warn or fail verdict (src/api/signoff.ts),
// and reads the current decision with its history. Signing needs the admin scope: it overrides
// what the tenant's profiles decided, as editing them does; reading needs read.

import { Ajv } from 'ajv';
import type { FromSchema } from 'json-schema-to-ts';
import type { Config } from '../../config/index.ts';
import { createWebhookQueue, type WebhookQueue } from '../../queue/queues.ts';
import type { AppDeps } from '../deps.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { signOffJob } from '../signoff.ts';
import { validationProblem } from '../validation.ts';
import { principalOf } from './auth.ts';

export const signOffSpecs = {
  signOff: {
    method: 'POST',
    url: '/v1/jobs/:id/signoffs',
    operationId: 'signOffJob',
    tag: 'jobs',
    scope: 'admin',
    summary:
      "Accept or reject a completed job's warn or fail verdict with a note; replaces any earlier sign-off (kept in the history) and is sent to the callbackUrl as job.signed_off",
    params: S.JobIdParams,
    body: { 'application/json': S.SignOffJson },
    responses: {
      201: { description: 'Recorded; the job now has these sign-offs', schema: S.SignOffs },
      ...S.problems(400, 401, 403, 404, 409, 415, 503),
    },
  },
  list: {
    method: 'GET',
    url: '/v1/jobs/:id/signoffs',
    operationId: 'getJobSignOffs',
    tag: 'jobs',
    scope: 'read',
    summary: "The job's current sign-off and every one kept (oldest first)",
    params: S.JobIdParams,
    responses: { 200: { description: 'Sign-offs', schema: S.SignOffs }, ...S.problems(400, 401, 403, 404, 503) },
  },
} satisfies Record<string, RouteSpec>;

const validateSignOff = new Ajv({ allErrors: false }).compile<FromSchema<typeof S.SignOffJson>>(S.SignOffJson);

export function signOffsPlugin(deps: AppDeps, config: Config) {
  return routesPlugin('earmark-signoffs', async (app) => {
    // The worker's webhook queue, over the API's connection (the worker delivers what is added
    // here), opened at the first sign-off: an API that never signs off holds none.
    let webhooks: WebhookQueue | null = null;
    const webhookQueue = () =>
      (webhooks ??= createWebhookQueue(deps.redis, config, (error) =>
        app.log.warn({ err: { message: error.message } }, 'webhook queue error'),
      ));
    app.addHook('onClose', async () => {
      await webhooks?.close().catch(() => undefined);
    });

    const signOffs = async (id: string) => {
      const history = await deps.store.signOffs.history(id);
      return { current: history.at(-1) ?? null, history };
    };

    route(app, signOffSpecs.signOff, async (request, reply) => {
      const principal = principalOf(request);
      const body = request.body;
      if (!validateSignOff(body)) throw validationProblem(validateSignOff.errors, 'body');
      const { id } = request.params;
      const signOff = await signOffJob(deps, webhookQueue(), principal, id, body);
      request.log.info({ jobId: id, decision: signOff.decision, number: signOff.number }, 'verdict signed off');
      return reply.code(201).send(await signOffs(id));
    });

    route(app, signOffSpecs.list, async (request) => {
      const { id } = request.params;
      await deps.jobs.load(principalOf(request).tenant, id);
      return signOffs(id);
    });
  });
}
