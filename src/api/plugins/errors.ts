// The one error handler: every failure leaves as RFC 9457 problem+json with a stable `code`.
// Nothing internal (stack, path, cause) reaches the body; 5xx are logged without the stack's
// file paths leaking into the response.

import type { FastifyError, FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { EarmarkError, errorCatalogue, isEarmarkError, type ErrorCode } from '../../errors/index.ts';

export function problemBody(error: EarmarkError, request: FastifyRequest): Record<string, unknown> {
  const entry = errorCatalogue[error.code];
  return {
    type: `urn:earmark:error:${error.code}`,
    title: entry.title,
    status: entry.status,
    code: error.code,
    detail: error.message,
    ...(typeof error.details.field === 'string' ? { field: error.details.field } : {}),
    instance: request.url.split('?')[0],
    requestId: String(request.id),
  };
}

export function sendProblem(reply: FastifyReply, request: FastifyRequest, error: EarmarkError): FastifyReply {
  const body = problemBody(error, request);
  if (error.code === 'service_unavailable' || error.code === 'storage_unavailable' || error.code === 'storage_full') reply.header('retry-after', '5');
  return reply.code(body.status as number).type('application/problem+json').send(JSON.stringify(body));
}

/** Fastify's and plugins' own errors, mapped onto catalogue codes. */
function fromFastify(error: FastifyError): EarmarkError {
  if (error.validation) {
    const first = error.validation[0];
    // Field names as the client wrote them: "sourceUrl", "limit", "metadata.desk".
    const parts = (first?.instancePath ?? '').split('/').filter(Boolean);
    const params = first?.params as { missingProperty?: string; additionalProperty?: string } | undefined;
    const named = params?.missingProperty ?? params?.additionalProperty;
    if (named) parts.push(named);
    const field = parts.join('.') || (error.validationContext ?? 'request');
    return new EarmarkError('validation_failed', `${field} ${params?.additionalProperty ? 'is not a known field' : first?.message ?? 'is invalid'}`, { field });
  }
  const byFastifyCode: Record<string, ErrorCode> = {
    FST_REQ_FILE_TOO_LARGE: 'payload_too_large',
    FST_ERR_CTP_BODY_TOO_LARGE: 'payload_too_large',
    FST_ERR_CTP_INVALID_MEDIA_TYPE: 'unsupported_media_type',
    FST_INVALID_MULTIPART_CONTENT_TYPE: 'unsupported_media_type',
    FST_ERR_CTP_EMPTY_JSON_BODY: 'validation_failed',
    FST_ERR_CTP_INVALID_JSON_BODY: 'validation_failed',
  };
  const multipartLimits: Record<string, [string, string]> = {
    FST_FIELDS_LIMIT: ['request', 'the form has more fields than allowed'],
    FST_PARTS_LIMIT: ['request', 'the form has more parts than allowed'],
    FST_FILES_LIMIT: ['file', 'send exactly one file part, named "file"'],
    FST_PROTO_VIOLATION: ['request', 'a form field name is a reserved name'],
  };
  const limit = error.code ? multipartLimits[error.code] : undefined;
  if (limit) return new EarmarkError('validation_failed', limit[1], { field: limit[0] });
  const code = error.code ? byFastifyCode[error.code] : undefined;
  if (code) return new EarmarkError(code, code === 'validation_failed' ? 'the body is not valid JSON' : errorCatalogue[code].title);
  if (error.statusCode === 400 || (error as { name?: string }).name === 'SyntaxError') return new EarmarkError('validation_failed', 'the request is malformed');
  if (error.statusCode === 413) return new EarmarkError('payload_too_large', errorCatalogue.payload_too_large.title);
  return new EarmarkError('internal_error', 'internal error');
}

/** ioredis errors while the API's connection is down (no offline queue). */
function isRedisDown(error: Error): boolean {
  return /Stream isn't writeable|enableOfflineQueue|Connection is closed|MaxRetriesPerRequest|ECONNREFUSED/i.test(error.message);
}

export async function errorsPlugin(app: FastifyInstance): Promise<void> {
  app.setErrorHandler((thrown: FastifyError, request, reply) => {
    let error: EarmarkError;
    if (isEarmarkError(thrown)) error = thrown;
    else if (isRedisDown(thrown)) error = new EarmarkError('service_unavailable', 'the queue store (Redis) is not reachable; retry later');
    else error = fromFastify(thrown);
    if (error.status >= 500) request.log.error({ code: error.code, err: { message: thrown.message, name: thrown.name } }, 'request failed');
    else request.log.info({ code: error.code }, 'request refused');
    return sendProblem(reply, request, error);
  });
  app.setNotFoundHandler((request, reply) => sendProblem(reply, request, new EarmarkError('not_found', `no route ${request.method} ${request.url.split('?')[0]}`)));
}
