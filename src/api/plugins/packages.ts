// Delivery package routes: submit a set of the tenant's jobs as one package, read its state and
// verdict, and its full report (src/api/packages.ts; checked by src/worker/package-worker.ts).

import { Ajv } from 'ajv';
import type { FromSchema } from 'json-schema-to-ts';
import type { Config } from '../../config/index.ts';
import { createPackageQueue, type PackageQueue } from '../../queue/queues.ts';
import type { AppDeps } from '../deps.ts';
import { packageReportText, readPackage, submitPackage } from '../packages.ts';
import { PackageIdParams, PackageJson, PackageView } from '../package-schemas.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import { idempotencyKeyOf } from '../submit.ts';
import * as S from '../schemas.ts';
import { validationProblem } from '../validation.ts';
import { principalOf } from './auth.ts';

export const packageSpecs = {
  submit: {
    method: 'POST',
    url: '/v1/packages',
    operationId: 'submitPackage',
    tag: 'packages',
    scope: 'submit',
    summary:
      "Check a set of this tenant's jobs together as one delivery package (a mix and its stems, or the versions of one programme)",
    body: { 'application/json': PackageJson },
    headers: {
      'Idempotency-Key': {
        description: 'Repeat a submission safely: the same key returns the package made the first time.',
        schema: { type: 'string', maxLength: 200 },
      },
    },
    responses: {
      202: {
        description: 'Queued: checked once every member job has finished',
        schema: PackageView,
        headers: { Location: 'The package status URL' },
      },
      200: { description: 'Already made with this Idempotency-Key', schema: PackageView },
      ...S.problems(400, 401, 403, 404, 409, 415, 422, 503),
    },
  },
  get: {
    method: 'GET',
    url: '/v1/packages/:id',
    operationId: 'getPackage',
    tag: 'packages',
    scope: 'read',
    summary: "A package's state, its members' verdicts, the set checks and the package verdict",
    params: PackageIdParams,
    responses: { 200: { description: 'The package', schema: PackageView }, ...S.problems(400, 401, 403, 404, 503) },
  },
  report: {
    method: 'GET',
    url: '/v1/packages/:id/report',
    operationId: 'getPackageReport',
    tag: 'packages',
    scope: 'read',
    summary: "A completed package's full report: every member's own report, the set and the residual spans",
    params: PackageIdParams,
    responses: {
      200: { description: 'The package report (as `earmark package --json` prints it)', schema: { type: 'object' } },
      ...S.problems(400, 401, 403, 404, 409, 503),
    },
  },
} satisfies Record<string, RouteSpec>;

const validatePackage = new Ajv({ allErrors: false }).compile<FromSchema<typeof PackageJson>>(PackageJson);

export function packagesPlugin(deps: AppDeps, config: Config) {
  return routesPlugin('earmark-packages', async (app) => {
    // The worker's package queue over the API's connection, opened at first use.
    let queue: PackageQueue | null = null;
    const packageQueue = () =>
      (queue ??= createPackageQueue(deps.redis, config, (error) =>
        app.log.warn({ err: { message: error.message } }, 'package queue error'),
      ));
    app.addHook('onClose', async () => {
      await queue?.close().catch(() => undefined);
    });

    route(app, packageSpecs.submit, async (request, reply) => {
      const { tenant } = principalOf(request);
      const body = request.body;
      if (!validatePackage(body)) throw validationProblem(validatePackage.errors, 'body');
      const { packageId, duplicate } = await submitPackage(
        deps,
        packageQueue(),
        tenant,
        { ...body, members: body.members.map((m) => ({ jobId: m.jobId, role: m.role })) },
        idempotencyKeyOf(request),
      );
      request.log.info({ packageId, members: body.members.length, duplicate }, 'package submitted');
      const view = await readPackage(deps, packageQueue(), tenant, packageId);
      return reply
        .code(duplicate ? 200 : 202)
        .header('location', view.links.self)
        .send(view);
    });

    route(app, packageSpecs.get, async (request) =>
      readPackage(deps, packageQueue(), principalOf(request).tenant, request.params.id),
    );

    route(app, packageSpecs.report, async (request, reply) => {
      const json = await packageReportText(deps, packageQueue(), principalOf(request).tenant, request.params.id);
      return reply.type('application/json').send(json);
    });
  });
}
