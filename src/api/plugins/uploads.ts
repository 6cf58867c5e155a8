// Direct uploads for large files (object-store backend): the client asks for a presigned PUT,
// sends the file straight to the bucket, then submits the job with the upload id. The API never
// carries the bytes; the worker hashes what landed in the bucket as it copies it.

import { Ajv } from 'ajv';
import type { FromSchema } from 'json-schema-to-ts';
import { randomBytes } from 'node:crypto';
import { EarmarkError } from '../../errors/index.ts';
import type { AppDeps } from '../deps.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { validationProblem } from '../validation.ts';
import { principalOf } from './auth.ts';

/** Long enough to start a large transfer on a slow link; S3 checks the expiry when the PUT starts. */
export const PRESIGN_EXPIRES_SECONDS = 3600;

export const uploadSpecs = {
  create: {
    method: 'POST',
    url: '/v1/uploads',
    operationId: 'createUpload',
    tag: 'jobs',
    scope: 'submit',
    summary: 'A presigned PUT URL for a large file (object-store backend only); then submit the job with the uploadId',
    body: { 'application/json': S.CreateUpload },
    responses: {
      201: { description: 'Where and how to PUT the file', schema: S.DirectUpload },
      ...S.problems(400, 401, 403, 413, 501, 503),
    },
  },
} satisfies Record<string, RouteSpec>;

// The route's body reaches the handler as unknown (route-spec.ts); this types it.
const validateCreate = new Ajv({ allErrors: false }).compile<FromSchema<typeof S.CreateUpload>>(S.CreateUpload);

export const newUploadId = () => `u_${randomBytes(12).toString('hex')}`;

export function uploadsPlugin(deps: AppDeps, uploadLimitBytes: number) {
  return routesPlugin('earmark-uploads', async (app) => {
    route(app, uploadSpecs.create, async (request, reply) => {
      const { tenant } = principalOf(request);
      const body = request.body;
      if (!validateCreate(body)) throw validationProblem(validateCreate.errors, 'body');
      const { fileName, sizeBytes } = body;
      if (sizeBytes > uploadLimitBytes)
        throw new EarmarkError('payload_too_large', `the upload is larger than ${uploadLimitBytes} bytes`, {
          limitBytes: uploadLimitBytes,
        });
      const presigned = await deps.storage.presignUpload(sizeBytes, PRESIGN_EXPIRES_SECONDS);
      const uploadId = newUploadId();
      await deps.store.uploads.put(tenant, uploadId, { storageKey: presigned.key, fileName, sizeBytes });
      return reply.code(201).send({
        uploadId,
        method: 'PUT',
        url: presigned.url,
        headers: presigned.headers,
        expiresAt: presigned.expiresAt.toISOString(),
      });
    });
  });
}
