// The one error handler: every failure leaves as RFC 9457 problem+json with a stable `code`.
// Nothing internal (stack, path, cause) reaches the body; 5xx are logged without the stack's
// file paths leaking into the response.

import type { FastifyError, FastifyReply, FastifyRequest } from 'fastify';
import fp from 'fastify-plugin';
import { catalogueEntry, EarmarkError, errorCatalogue, isEarmarkError, type ErrorCode } from '../../errors/index.ts';
import { validationProblem } from '../validation.ts';

/** Client input (a field name, a path) is echoed clipped: a body never carries more than a few
 * dozen characters of it, whatever the client sent. */
const ECHO_CHARS = 48;
const DETAIL_CHARS = 200;
const clip = (text: string, max: number) => (text.length > max ? `${text.slice(0, max)}…` : text);

export function problemBody(error: EarmarkError, request: FastifyRequest | null): Record<string, unknown> {
  const entry = errorCatalogue[error.code];
  const field = typeof error.details.field === 'string' ? error.details.field : null;
  const path = request ? request.url.split('?')[0] : null;
  let detail = error.message;
  if (field && field.length > ECHO_CHARS) detail = detail.split(field).join(clip(field, ECHO_CHARS));
  if (path && path.length > ECHO_CHARS) detail = detail.split(path).join(clip(path, ECHO_CHARS));
  return {
    type: `urn:earmark:error:${error.code}`,
    title: entry.title,
    status: entry.status,
    code: error.code,
    detail: clip(detail, DETAIL_CHARS),
    ...(field !== null ? { field: clip(field, ECHO_CHARS) } : {}),
    ...(path !== null ? { instance: clip(path, ECHO_CHARS) } : {}),
    ...(request ? { requestId: String(request.id) } : {}),
  };
}

/** A complete problem+json response for a raw socket (no request object: the parser refused it). */
export function rawProblem(error: EarmarkError): string {
  const body = JSON.stringify(problemBody(error, null));
  const reason =
    error.status === 408 ? 'Request Timeout' : error.status === 431 ? 'Request Header Fields Too Large' : 'Bad Request';
  return `HTTP/1.1 ${error.status} ${reason}\r\nContent-Type: application/problem+json\r\nContent-Length: ${Buffer.byteLength(body)}\r\nConnection: close\r\n\r\n${body}`;
}

/** Errors of Node's HTTP parser (bad header bytes, headers too large, the request timeout). */
export function clientProblem(error: NodeJS.ErrnoException): EarmarkError {
  if (error.code === 'ERR_HTTP_REQUEST_TIMEOUT')
    return new EarmarkError('request_timeout', 'the whole request did not arrive within the request timeout');
  if (error.code === 'HPE_HEADER_OVERFLOW')
    return new EarmarkError('headers_too_large', 'the request line and headers are larger than allowed');
  return new EarmarkError('validation_failed', 'the request is not valid HTTP/1.1');
}

export function sendProblem(reply: FastifyReply, request: FastifyRequest, error: EarmarkError): FastifyReply {
  const body = problemBody(error, request);
  const { retryAfterSeconds } = catalogueEntry(error.code);
  if (retryAfterSeconds !== undefined) reply.header('retry-after', String(retryAfterSeconds));
  if (error.code === 'payload_too_large') {
    // Fastify's body parser asks to close at once, which can reset the connection before the
    // client reads the 413: the bounded drain closes it instead.
    reply.removeHeader('connection');
    drainThenClose(request, reply);
  }
  return reply
    .code(body.status as number)
    .type('application/problem+json')
    .send(JSON.stringify(body));
}

/** Past this, the rest of a refused body is not read: the connection is closed. */
const DRAIN_BYTES = 8 * 1024 * 1024;

/** A refused body may still be on its way (or endless): the answer goes out at once, then the
 * rest is read and dropped, so a client still sending sees the 413 rather than a reset, up to
 * DRAIN_BYTES; a stalled client meets the idle timeout. */
function drainThenClose(request: FastifyRequest, reply: FastifyReply): void {
  const raw = request.raw;
  if (raw.complete) return;
  reply.raw.once('finish', () => {
    let drained = 0;
    raw.on('data', (chunk: Buffer) => {
      drained += chunk.length;
      if (drained > DRAIN_BYTES) raw.socket?.destroy();
    });
    raw.resume();
  });
}

/** Fastify's and plugins' own errors, mapped onto catalogue codes. */
function fromFastify(error: FastifyError): EarmarkError {
  if (error.validation) return validationProblem(error.validation, error.validationContext ?? 'request');
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
  if (error.code === 'FST_ERR_MAX_PARAM_LENGTH')
    return new EarmarkError('uri_too_long', 'a path segment is longer than allowed');
  if (error.code === 'FST_ERR_BAD_URL') return new EarmarkError('validation_failed', 'the path is not a valid URL');
  // The multipart parser's own errors are plain Errors: a broken body is the client's.
  if (
    !error.code &&
    /^(Multipart: )?Boundary not found|Unexpected end of (form|multipart data)|Malformed part header|Part terminated early|Unsupported content type/i.test(
      error.message,
    )
  ) {
    return new EarmarkError('validation_failed', 'the multipart body is malformed', { field: 'body' });
  }
  const limit = error.code ? multipartLimits[error.code] : undefined;
  if (limit) return new EarmarkError('validation_failed', limit[1], { field: limit[0] });
  const code = error.code ? byFastifyCode[error.code] : undefined;
  if (code)
    return new EarmarkError(
      code,
      code === 'validation_failed' ? 'the body is not valid JSON' : errorCatalogue[code].title,
    );
  if (error.statusCode === 400 || (error as { name?: string }).name === 'SyntaxError')
    return new EarmarkError('validation_failed', 'the request is malformed');
  if (error.statusCode === 413) return new EarmarkError('payload_too_large', errorCatalogue.payload_too_large.title);
  return new EarmarkError('internal_error', 'internal error');
}

/** ioredis errors while the API's connection is down (no offline queue). */
function isRedisDown(error: Error): boolean {
  return /Stream isn't writeable|enableOfflineQueue|Connection is closed|MaxRetriesPerRequest|ECONNREFUSED/i.test(
    error.message,
  );
}

export function toProblem(thrown: FastifyError): EarmarkError {
  if (isEarmarkError(thrown)) return thrown;
  if (isRedisDown(thrown))
    return new EarmarkError('service_unavailable', 'the queue store (Redis) is not reachable; retry later');
  return fromFastify(thrown);
}

/** Fastify's `frameworkErrors`: a bad or too long path, answered before any route runs. */
export function frameworkProblem(thrown: FastifyError, request: FastifyRequest, reply: FastifyReply): void {
  const error = toProblem(thrown);
  request.log.info({ code: error.code }, 'request refused');
  void sendProblem(reply, request, error);
}

export const ERRORS_PLUGIN = 'earmark-errors';

export const errorsPlugin = fp(
  async (app) => {
    app.setErrorHandler((thrown: FastifyError, request, reply) => {
      const error = toProblem(thrown);
      if (error.status >= 500)
        request.log.error({ code: error.code, err: { message: thrown.message, name: thrown.name } }, 'request failed');
      else request.log.info({ code: error.code }, 'request refused');
      return sendProblem(reply, request, error);
    });
    app.setNotFoundHandler((request, reply) =>
      sendProblem(
        reply,
        request,
        new EarmarkError('not_found', `no route ${request.method} ${request.url.split('?')[0]}`),
      ),
    );
  },
  { name: ERRORS_PLUGIN, fastify: '5.x' },
);
