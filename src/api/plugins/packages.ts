// Delivery package routes: submit a set of the tenant's jobs as one package, read its state and
// verdict, and its full report (src/api/packages.ts; checked by src/worker/package-worker.ts).

import { Ajv } from 'ajv';
import type { FromSchema } from 'json-schema-to-ts';
import type { Config } from '../../config/index.ts';
import { createPackageQueue, type PackageQueue } from '../../queue/queues.ts';
import type { AppDeps } from '../deps.ts';
import { packageReportText, readPackage, submitPackage } from '../packages.ts';
import { route, routesPlugin, type ObjectSchema, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { validationProblem } from '../validation.ts';
import { principalOf } from './auth.ts';

type Schema = Record<string, unknown>;

const num = { type: ['number', 'null'] };
const str = { type: 'string' };
const strOrNull = { type: ['string', 'null'] };
const verdictOrNull = { type: ['string', 'null'], enum: ['pass', 'warn', 'fail', null] };
const role = { type: 'string', enum: ['mix', 'stem', 'version'] } as const;
const object = (properties: Record<string, Schema>): Schema => ({
  type: 'object',
  required: Object.keys(properties),
  properties,
  additionalProperties: false,
});

const PROFILE_ID = { type: 'string', pattern: '^[a-z0-9][a-z0-9-]{0,63}$' } as const;
const JOB_ID = S.JobIdParams.properties.id;

export const PackageJson = {
  type: 'object',
  required: ['profile', 'members'],
  properties: {
    profile: { ...PROFILE_ID, description: 'The profile the mix and versions were checked against (their jobs).' },
    stemProfile: {
      ...PROFILE_ID,
      description: "The profile the stems were checked against; the package's if left out.",
    },
    toleranceDb: {
      type: 'number',
      exclusiveMaximum: 0,
      minimum: -200,
      description: 'Most the stems may differ from the mix, as residual level in dB relative to the mix (default -60).',
    },
    members: {
      type: 'array',
      minItems: 1,
      maxItems: 32,
      description:
        'Jobs of this tenant (queued, running or finished). At most one mix; stems need the mix; at least two members.',
      items: {
        type: 'object',
        required: ['jobId', 'role'],
        properties: { jobId: JOB_ID, role },
        additionalProperties: false,
      },
    },
    callbackUrl: { type: 'string', maxLength: 2000, description: 'Receives package.completed or package.failed.' },
    externalId: { type: 'string', maxLength: 200 },
  },
  additionalProperties: false,
} as const satisfies ObjectSchema;

const PackageIdParams = {
  type: 'object',
  required: ['id'],
  properties: { id: { type: 'string', pattern: '^p_[a-f0-9]{24}$' } },
} as const satisfies ObjectSchema;

const state = { type: 'string', enum: ['queued', 'active', 'completed', 'failed'] };

const ResidualChannel = object({
  channel: { type: 'integer' },
  mixRmsDbfs: num,
  residualRmsDbfs: num,
  residualRelativeDb: num,
  residualPeakDbfs: num,
  residualPeakFrame: { type: ['integer', 'null'] },
});

export const PackageView: Schema = {
  ...object({
    id: str,
    state,
    createdAt: { type: 'string', format: 'date-time' },
    finishedAt: { type: ['string', 'null'], format: 'date-time' },
    profile: str,
    stemProfile: strOrNull,
    toleranceDb: { type: 'number' },
    externalId: strOrNull,
    members: {
      type: 'array',
      items: object({
        jobId: str,
        role,
        fileName: strOrNull,
        state: { type: 'string', enum: ['queued', 'active', 'completed', 'failed', 'gone'] },
        verdict: verdictOrNull,
        headline: strOrNull,
      }),
    },
    verdict: verdictOrNull,
    headline: strOrNull,
    set: {
      anyOf: [
        { type: 'null' },
        object({
          members: {
            type: 'array',
            items: object({
              name: str,
              role,
              container: str,
              encoding: str,
              sampleRate: { type: 'integer' },
              channels: { type: 'integer' },
              channelLabels: { type: 'array', items: str },
              bitsPerSample: { type: ['integer', 'null'] },
              depth: str,
              frames: { type: 'integer' },
              durationSeconds: { type: 'number' },
            }),
          },
          checks: {
            type: 'array',
            items: object({
              id: {
                type: 'string',
                enum: ['same_sample_rate', 'same_bit_depth', 'same_length', 'stem_channels', 'stems_sum_to_mix'],
              },
              passed: { type: 'boolean' },
              explanation: str,
            }),
          },
          residualSkipped: strOrNull,
        }),
      ],
    },
    residual: {
      anyOf: [
        { type: 'null' },
        object({
          frames: { type: 'integer' },
          toleranceDb: { type: 'number' },
          mixRmsDbfs: num,
          residualRmsDbfs: num,
          residualRelativeDb: num,
          residualPeakDbfs: num,
          withinTolerance: { type: 'boolean' },
          spansTotal: { type: 'integer' },
          channels: { type: 'array', items: ResidualChannel },
        }),
      ],
    },
    residualSpans: {
      type: 'array',
      items: object({
        startFrame: { type: 'integer' },
        endFrame: { type: 'integer' },
        channel: { type: 'integer' },
        worstRelativeDb: num,
        windows: { type: 'integer' },
        startSeconds: { type: 'number' },
        endSeconds: { type: 'number' },
        startTimecode: str,
        endTimecode: str,
        channelName: str,
      }),
    },
    error: { anyOf: [{ type: 'null' }, object({ code: str, message: str })] },
    callback: {
      anyOf: [{ type: 'null' }, object({ url: str, deliveries: { type: 'array', items: S.DeliveryAttempt } })],
    },
    links: object({ self: str, report: strOrNull }),
  }),
  description:
    "A delivery package: each member's own job and verdict, the set checks (rate, depth, length to the sample, stem channels, stems summing to the mix), the residual and the package verdict (the worst of the members' verdicts and the set checks).",
};

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
      const header = request.headers['idempotency-key'];
      const idempotencyKey = typeof header === 'string' ? header.slice(0, 200) : undefined;
      const { packageId, duplicate } = await submitPackage(
        deps,
        packageQueue(),
        tenant,
        { ...body, members: body.members.map((m) => ({ jobId: m.jobId, role: m.role })) },
        idempotencyKey,
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
