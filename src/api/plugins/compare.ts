// GET /v1/jobs/:id/compare/:otherId: what changed between a delivery (:id) and its re-delivery
// (:otherId), both completed jobs of the caller's tenant. The comparison is src/profiles/compare.ts,
// the same the CLI's `earmark compare` prints.

import { compareReports } from '../../profiles/compare.ts';
import { reportFromText } from '../../profiles/report-json.ts';
import type { AppDeps } from '../deps.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { principalOf } from './auth.ts';

type Schema = Record<string, unknown>;

const num = { type: ['number', 'null'] };
const str = { type: 'string' };
const strOrNull = { type: ['string', 'null'] };
const verdict = { type: 'string', enum: ['pass', 'warn', 'fail'] };
const object = (properties: Record<string, Schema>): Schema => ({
  type: 'object',
  required: Object.keys(properties),
  properties,
  additionalProperties: false,
});

const Side = object({
  fileName: strOrNull,
  sha256: strOrNull,
  profile: object({ id: str, version: str }),
  verdict,
  headline: str,
  generatedAt: str,
});

const CheckSide = {
  anyOf: [
    { type: 'null' },
    object({
      outcome: { type: 'string', enum: ['pass', 'fail', 'not_measurable', 'marginal'] },
      passed: { type: 'boolean' },
      severity: { type: 'string', enum: ['fail', 'warn'] },
      measured: {
        anyOf: [{ type: ['number', 'string', 'null'] }, { type: 'array', items: { type: ['number', 'string'] } }],
      },
      unit: strOrNull,
      explanation: str,
    }),
  ],
};

const ComparedFlag = object({
  number: { type: 'integer' },
  kind: str,
  title: str,
  severity: { type: 'string', enum: ['fail', 'warn', 'remark'] },
  channel: { type: ['integer', 'null'] },
  channelName: str,
  otherChannelName: strOrNull,
  startSeconds: { type: 'number' },
  endSeconds: { type: 'number' },
  startTimecode: str,
  endTimecode: str,
  worstValue: num,
  unit: strOrNull,
  count: { type: 'integer' },
});

export const Comparison: Schema = {
  ...object({
    before: Side,
    after: Side,
    verdict: object({ before: verdict, after: verdict, change: { type: 'string', enum: ['better', 'worse', 'same'] } }),
    warnings: {
      type: 'array',
      items: object({
        code: {
          type: 'string',
          enum: [
            'different_profile',
            'different_profile_version',
            'different_programme',
            'same_file',
            'flags_truncated',
          ],
        },
        message: str,
      }),
    },
    readings: {
      type: 'array',
      items: object({
        key: str,
        label: str,
        unit: str,
        deltaUnit: str,
        decimals: { type: 'integer' },
        before: num,
        after: num,
        delta: num,
        changed: { type: 'boolean' },
      }),
    },
    format: {
      type: 'array',
      items: object({ key: str, label: str, before: strOrNull, after: strOrNull, changed: { type: 'boolean' } }),
    },
    checks: {
      type: 'array',
      items: object({
        ruleId: str,
        type: str,
        change: { type: 'string', enum: ['fixed', 'broken', 'still_broken', 'still_met', 'added', 'removed'] },
        before: CheckSide,
        after: CheckSide,
      }),
    },
    flags: object({
      toleranceSeconds: { type: 'number' },
      resolved: { type: 'array', items: ComparedFlag },
      new: { type: 'array', items: ComparedFlag },
      persisting: { type: 'array', items: object({ before: ComparedFlag, after: ComparedFlag }) },
    }),
  }),
  description:
    'What changed from the first delivery (before) to the re-delivery (after). Flags match by kind, channel and time within flags.toleranceSeconds; the two files are taken to start at the same point.',
};

const JOB_ID = S.JobIdParams.properties.id;

export const compareSpecs = {
  compare: {
    method: 'GET',
    url: '/v1/jobs/:id/compare/:otherId',
    operationId: 'compareJobs',
    tag: 'jobs',
    scope: 'read',
    summary:
      'Compare a completed job (:id, the first delivery) with another (:otherId, the re-delivery): readings with deltas, rule outcomes, flags resolved, new and persisting, the verdict',
    params: {
      type: 'object',
      required: ['id', 'otherId'],
      properties: { id: JOB_ID, otherId: JOB_ID },
    } as const,
    responses: {
      200: { description: 'The comparison', schema: Comparison },
      ...S.problems(400, 401, 403, 404, 409, 503),
    },
  },
} satisfies Record<string, RouteSpec>;

export function comparePlugin(deps: AppDeps) {
  return routesPlugin('earmark-compare', async (app) => {
    route(app, compareSpecs.compare, async (request) => {
      const { tenant } = principalOf(request);
      const { id, otherId } = request.params;
      // Both must be the caller's and completed: the repository says not_found or report_not_ready.
      const [before, after] = await Promise.all([deps.jobs.report(tenant, id), deps.jobs.report(tenant, otherId)]);
      return compareReports(
        reportFromText(before, `the report of job ${id}`),
        reportFromText(after, `the report of job ${otherId}`),
      );
    });
  });
}
