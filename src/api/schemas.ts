// JSON Schemas of the API. Fastify validates requests with them; the OpenAPI document is built
// from the same objects (components are recognised by identity and become $refs).

import { readFileSync } from 'node:fs';
import { profileSchema } from '../profiles/index.ts';
import { projectFileUrl } from '../config/paths.ts';
import { ISO_DATE_OR_DATE_TIME } from './list-filters.ts';
import type { ObjectSchema } from './route-spec.ts';

type Schema = Record<string, unknown>;

const nullable = (type: string, extra: Schema = {}): Schema => ({ type: [type, 'null'], ...extra });

export const Problem: Schema = {
  type: 'object',
  description: 'RFC 9457 problem details; `code` is stable, `title` and `detail` are for people.',
  required: ['type', 'title', 'status', 'code', 'detail'],
  properties: {
    type: { type: 'string' },
    title: { type: 'string' },
    status: { type: 'integer' },
    code: { type: 'string' },
    detail: { type: 'string' },
    field: { type: 'string' },
    instance: { type: 'string' },
    requestId: { type: 'string' },
  },
};

/** problem+json responses (RFC 9457) for the given statuses, for route specs. */
export const problems = (...statuses: number[]) =>
  Object.fromEntries(
    statuses.map((s) => [s, { description: 'Problem', schema: Problem, contentType: 'application/problem+json' }]),
  );

export const DeliveryAttempt: Schema = {
  type: 'object',
  required: ['deliveryId', 'event', 'attempt', 'at', 'statusCode', 'outcome', 'error'],
  properties: {
    deliveryId: { type: 'string' },
    event: {
      type: 'string',
      enum: ['job.completed', 'job.failed', 'job.signed_off', 'package.completed', 'package.failed'],
    },
    attempt: { type: 'integer', minimum: 1 },
    at: { type: 'string', format: 'date-time' },
    statusCode: nullable('integer'),
    outcome: { type: 'string', enum: ['delivered', 'retrying', 'failed'] },
    error: nullable('string'),
  },
  additionalProperties: false,
};

/** An operator's decision on a warn or fail verdict (POST /v1/jobs/:id/signoffs). */
export const SignOff: Schema = {
  type: 'object',
  required: ['number', 'decision', 'note', 'verdict', 'by', 'at'],
  properties: {
    number: { type: 'integer', minimum: 1, description: "1 for the job's first sign-off, then 2, 3, ..." },
    decision: { type: 'string', enum: ['accept', 'reject'] },
    note: nullable('string'),
    verdict: { type: 'string', enum: ['warn', 'fail'], description: 'The verdict signed off.' },
    by: {
      type: 'object',
      required: ['tenant', 'keyId', 'operator'],
      description:
        "The API key that signed (its tenant and its digest's first 12 hex digits, never the key), and the name the operator gave (null when none was given).",
      properties: { tenant: { type: 'string' }, keyId: { type: 'string' }, operator: nullable('string') },
      additionalProperties: false,
    },
    at: { type: 'string', format: 'date-time' },
  },
  additionalProperties: false,
};

export const SignOffs: Schema = {
  type: 'object',
  required: ['current', 'history'],
  properties: {
    current: { description: 'The latest sign-off; it replaces any earlier one.', anyOf: [SignOff, { type: 'null' }] },
    history: { type: 'array', items: SignOff, description: 'Every sign-off kept (the last 50), oldest first.' },
  },
  additionalProperties: false,
};

export const Job: Schema = {
  type: 'object',
  required: [
    'id',
    'state',
    'progressPercent',
    'createdAt',
    'startedAt',
    'finishedAt',
    'attemptsMade',
    'profile',
    'source',
    'externalId',
    'metadata',
    'verdict',
    'headline',
    'summary',
    'error',
    'callback',
    'links',
  ],
  properties: {
    id: { type: 'string' },
    state: { type: 'string', enum: ['queued', 'active', 'completed', 'failed'] },
    progressPercent: { type: 'integer', minimum: 0, maximum: 100 },
    createdAt: { type: 'string', format: 'date-time' },
    startedAt: nullable('string', { format: 'date-time' }),
    finishedAt: nullable('string', { format: 'date-time' }),
    attemptsMade: { type: 'integer', minimum: 0 },
    profile: {
      type: 'object',
      required: ['id', 'version'],
      properties: { id: { type: 'string' }, version: { type: 'string' } },
      additionalProperties: false,
    },
    source: {
      oneOf: [
        {
          type: 'object',
          required: ['kind', 'fileName', 'sizeBytes'],
          properties: { kind: { const: 'upload' }, fileName: { type: 'string' }, sizeBytes: { type: 'integer' } },
          additionalProperties: false,
        },
        {
          type: 'object',
          required: ['kind', 'url'],
          properties: { kind: { const: 'url' }, url: { type: 'string' } },
          additionalProperties: false,
        },
      ],
    },
    externalId: nullable('string'),
    metadata: { type: ['object', 'null'], additionalProperties: { type: 'string' } },
    verdict: { type: ['string', 'null'], enum: ['pass', 'warn', 'fail', null] },
    headline: nullable('string', {
      description:
        "The report's first line: the verdict and its main reason in plain words (null until completed, and for jobs from before report version 2).",
    }),
    summary: {
      type: ['object', 'null'],
      required: ['integratedLufs', 'truePeakDbtp'],
      additionalProperties: false,
      properties: { integratedLufs: { type: ['number', 'null'] }, truePeakDbtp: { type: ['number', 'null'] } },
    },
    error: {
      type: ['object', 'null'],
      required: ['code', 'message'],
      properties: { code: { type: 'string' }, message: { type: 'string' } },
      additionalProperties: false,
    },
    callback: {
      type: ['object', 'null'],
      required: ['url', 'deliveries'],
      properties: { url: { type: 'string' }, deliveries: { type: 'array', items: DeliveryAttempt } },
      additionalProperties: false,
    },
    links: {
      type: 'object',
      required: ['self', 'report'],
      properties: { self: { type: 'string' }, report: nullable('string') },
      additionalProperties: false,
    },
    rerunOf: { type: 'string', description: 'Only on a re-run: the job whose stored audio it checked again.' },
    reruns: {
      type: 'array',
      items: { type: 'string' },
      description: 'GET /v1/jobs/:id only: the re-runs of this job, oldest first.',
    },
    signOff: {
      description:
        "The operator's current sign-off of the verdict (history: /signoffs); GET /v1/jobs/:id gives it as null when there is none, the listing only when there is one.",
      anyOf: [SignOff, { type: 'null' }],
    },
  },
  additionalProperties: false,
};

export const JobAccepted: Schema = {
  type: 'object',
  required: ['id', 'state', 'statusUrl', 'duplicate'],
  properties: {
    id: { type: 'string' },
    state: { type: 'string', enum: ['queued', 'active', 'completed', 'failed'] },
    statusUrl: { type: 'string' },
    /** True when an Idempotency-Key matched an earlier submission. */
    duplicate: { type: 'boolean' },
  },
  additionalProperties: false,
};

export const JobList: Schema = {
  type: 'object',
  required: ['items', 'nextCursor'],
  properties: { items: { type: 'array', items: Job }, nextCursor: nullable('string') },
  additionalProperties: false,
};

/** view=all (every tenant) needs the operator scope; the default is the key's own tenant. */
export const ViewQuery = {
  type: 'object',
  properties: {
    view: {
      type: 'string',
      enum: ['tenant', 'all'],
      default: 'tenant',
      description: "tenant: the API key's tenant only; all: every tenant (operator scope)",
    },
  },
  additionalProperties: false,
} as const satisfies ObjectSchema;

export const QueueStatus: Schema = {
  type: 'object',
  required: ['view', 'waiting', 'active', 'delayed', 'completed', 'failed', 'workers', 'finishedLastMinute'],
  properties: {
    view: { type: 'string', enum: ['tenant', 'all'], description: 'Whose jobs the counts cover' },
    waiting: { type: 'integer' },
    active: { type: 'integer' },
    delayed: { type: 'integer' },
    completed: { type: 'integer' },
    failed: { type: 'integer' },
    workers: { type: 'integer' },
    finishedLastMinute: { type: 'integer' },
  },
  additionalProperties: false,
};

/** The delivery profile (openapi/profile.schema.json, owned by the profiles layer). */
export const Profile: Schema = profileSchema;

export const ProfileEntry: Schema = {
  type: 'object',
  required: ['profile', 'builtin', 'versions'],
  properties: { profile: Profile, builtin: { type: 'boolean' }, versions: { type: 'integer', minimum: 1 } },
  additionalProperties: false,
};

export const ProfileList: Schema = {
  type: 'object',
  required: ['items'],
  properties: { items: { type: 'array', items: ProfileEntry } },
  additionalProperties: false,
};

const REPORT_SCHEMA_URL = projectFileUrl('openapi/report.schema.json');
const REPORT_PREFIX = 'Report';

/** The report schema's $defs become components named Report<Def>; its refs follow them. */
function reportComponents(): Record<string, Schema> {
  const file = JSON.parse(readFileSync(REPORT_SCHEMA_URL, 'utf8')) as { $defs: Record<string, Schema> };
  const retarget = (value: unknown): unknown => {
    if (Array.isArray(value)) return value.map(retarget);
    if (!value || typeof value !== 'object') return value;
    return Object.fromEntries(
      Object.entries(value).map(([k, v]) => [
        k,
        k === '$ref' && typeof v === 'string'
          ? v.replace('#/$defs/', `#/components/schemas/${REPORT_PREFIX}`)
          : retarget(v),
      ]),
    );
  };
  return Object.fromEntries(
    Object.entries(file.$defs).map(([name, def]) => [`${REPORT_PREFIX}${name}`, retarget(def) as Schema]),
  );
}

/** Every definition of the QC report (openapi/report.schema.json, generated from src/profiles/report.ts). */
export const reportDefinitions = reportComponents();
/** The QC report itself. */
export const Report: Schema = reportDefinitions[`${REPORT_PREFIX}QcReport`];

/** The report as GET /v1/jobs/:id/report serves it: the stored report, plus the operator's current
 * sign-off when there is one (never part of the stored report: the numbers stay as analysed). */
export const ServedReport: Schema = {
  ...Report,
  properties: {
    ...(Report.properties as Record<string, Schema>),
    signOff: SignOff,
  },
};

export const Health: Schema = {
  type: 'object',
  required: ['status'],
  properties: {
    status: { type: 'string', enum: ['ok', 'unavailable'] },
    redis: { type: 'boolean' },
    storage: { type: 'boolean' },
  },
  additionalProperties: false,
};

export const components: Record<string, Schema> = {
  Problem,
  DeliveryAttempt,
  Job,
  JobAccepted,
  JobList,
  QueueStatus,
  Profile,
  ProfileEntry,
  ProfileList,
  Health,
  SignOff,
  SignOffs,
  ServedReport,
  ...reportDefinitions,
};

export const JobIdParams = {
  type: 'object',
  required: ['id'],
  properties: { id: { type: 'string', pattern: '^j_[a-z0-9]{20,40}$' } },
} as const satisfies ObjectSchema;

export const ProfileIdParams = {
  type: 'object',
  required: ['id'],
  properties: { id: { type: 'string', pattern: '^[a-z0-9][a-z0-9-]{0,63}$' } },
} as const satisfies ObjectSchema;

export const ListJobsQuery = {
  type: 'object',
  properties: {
    state: { type: 'string', enum: ['queued', 'active', 'completed', 'failed'] },
    verdict: { type: 'string', enum: ['pass', 'warn', 'fail'] },
    profile: { type: 'string', maxLength: 64 },
    q: {
      type: 'string',
      minLength: 1,
      maxLength: 200,
      description: "Case-insensitive substring of the file name (a URL job: its URL) or the job's externalId.",
    },
    submittedFrom: {
      type: 'string',
      maxLength: 40,
      pattern: ISO_DATE_OR_DATE_TIME,
      description:
        'Jobs submitted at or after this ISO 8601 date-time (with Z or an offset), or from the start (00:00 UTC) of this date.',
    },
    submittedTo: {
      type: 'string',
      maxLength: 40,
      pattern: ISO_DATE_OR_DATE_TIME,
      description:
        'Jobs submitted before this ISO 8601 date-time (with Z or an offset), or up to the end (24:00 UTC) of this date.',
    },
    limit: { type: 'integer', minimum: 1, maximum: 100, default: 20 },
    cursor: {
      type: 'string',
      maxLength: 200,
      description: 'nextCursor of the previous page; send the same filters with it.',
    },
  },
  additionalProperties: false,
} as const satisfies ObjectSchema;

const submitFields = {
  profile: {
    type: 'string',
    pattern: '^[a-z0-9][a-z0-9-]{0,63}$',
    description: "Profile id (built-in or the tenant's own); its current version is used.",
  },
  callbackUrl: {
    type: 'string',
    maxLength: 2000,
    description: 'Receives a signed POST when the job completes or fails.',
  },
  externalId: { type: 'string', maxLength: 200 },
} as const;

export const SubmitJson = {
  type: 'object',
  required: ['profile'],
  properties: {
    sourceUrl: {
      type: 'string',
      maxLength: 2000,
      description: 'Fetched by the worker (size cap, timeout; internal addresses refused). Give this or uploadId.',
    },
    uploadId: {
      type: 'string',
      pattern: '^u_[a-f0-9]{24}$',
      description: 'A direct upload (POST /v1/uploads) whose file has been PUT. Give this or sourceUrl.',
    },
    ...submitFields,
    metadata: { type: 'object', maxProperties: 20, additionalProperties: { type: 'string', maxLength: 500 } },
  },
  additionalProperties: false,
} as const satisfies ObjectSchema;

export const CreateUpload = {
  type: 'object',
  required: ['fileName', 'sizeBytes'],
  properties: {
    fileName: { type: 'string', minLength: 1, maxLength: 255, description: 'Shown in the report.' },
    sizeBytes: {
      type: 'integer',
      minimum: 1,
      description: 'The exact size of the file; the signature covers it, so the store refuses any other.',
    },
  },
  additionalProperties: false,
} as const satisfies ObjectSchema;

export const DirectUpload: Schema = {
  type: 'object',
  required: ['uploadId', 'method', 'url', 'headers', 'expiresAt'],
  properties: {
    uploadId: { type: 'string' },
    method: { type: 'string', enum: ['PUT'] },
    url: { type: 'string', description: 'Presigned: send the file body here, unchanged, before expiresAt.' },
    headers: {
      type: 'object',
      additionalProperties: { type: 'string' },
      description: 'Send exactly these headers (the signature covers them): Content-Length, the declared size.',
    },
    expiresAt: { type: 'string', format: 'date-time' },
  },
  additionalProperties: false,
};

export const SubmitMultipart: Schema = {
  type: 'object',
  required: ['file', 'profile'],
  properties: {
    file: {
      type: 'string',
      contentMediaType: 'application/octet-stream',
      description: 'The audio file (format detected from its bytes).',
    },
    ...submitFields,
    metadata: { type: 'string', description: 'A JSON object of string values.' },
  },
};

export const RerunJson = {
  type: 'object',
  required: ['profile'],
  properties: {
    profile: { ...submitFields.profile, description: "Profile id (built-in or the tenant's own)." },
    profileVersion: {
      type: 'string',
      pattern: '^[1-9][0-9]{0,8}\\.0\\.0$',
      description: 'A stored version of that profile ("3.0.0"); the current one when left out.',
    },
    callbackUrl: {
      type: ['string', 'null'],
      maxLength: 2000,
      description: "Left out: the original job's callbackUrl; null: none.",
    },
  },
  additionalProperties: false,
} as const satisfies ObjectSchema;

export const SignOffJson = {
  type: 'object',
  required: ['decision'],
  properties: {
    decision: { type: 'string', enum: ['accept', 'reject'] },
    note: {
      type: 'string',
      maxLength: 2000,
      description: 'Why. Required (not blank) to accept a fail verdict.',
    },
    operator: {
      type: 'string',
      maxLength: 100,
      description: 'Who signs, by name, when several people share one API key (recorded beside the key).',
    },
  },
  additionalProperties: false,
} as const satisfies ObjectSchema;
