// The delivery package routes' schemas (src/api/plugins/packages.ts): the submission, and the
// package as GET /v1/packages/:id and the package webhooks show it (src/queue/package-view.ts).

import type { ObjectSchema } from './route-spec.ts';
import * as S from './schemas.ts';

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

export const PackageIdParams = {
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
