// One catalogue of error codes. Every layer throws EarmarkError with one of these codes;
// the CLI maps them to exit codes and stderr lines, the API to problem+json (RFC 9457).

export const errorCatalogue = {
  // Input files
  empty_file: { status: 422, title: 'The file is empty' },
  unsupported_format: { status: 415, title: 'The file is not in an audio format Earmark reads' },
  unsupported_encoding: { status: 415, title: 'The container is known but its sample encoding is not supported' },
  corrupt_file: { status: 422, title: 'The file is damaged or inconsistent' },
  decoded_size_exceeded: { status: 413, title: 'The decoded audio is larger than the configured cap' },
  file_not_found: { status: 404, title: 'The file does not exist or cannot be read' },
  // Arguments and profiles
  invalid_argument: { status: 400, title: 'An argument is invalid' },
  invalid_profile: { status: 400, title: 'The delivery profile is invalid' },
  unknown_profile: { status: 422, title: 'No delivery profile has this id' },
  // Service (HTTP API, queue, workers)
  validation_failed: { status: 400, title: 'The request does not match its schema' },
  unauthorized: { status: 401, title: 'A valid API key is required' },
  forbidden: { status: 403, title: 'The API key lacks the scope for this operation' },
  not_found: { status: 404, title: 'No such resource' },
  idempotency_conflict: { status: 409, title: 'The Idempotency-Key was used with a different request' },
  report_not_ready: { status: 409, title: 'The job has not completed, so it has no report yet' },
  payload_too_large: { status: 413, title: 'The upload is larger than the configured limit' },
  unsupported_media_type: { status: 415, title: 'The request body type is not accepted here' },
  source_refused: { status: 422, title: 'The URL is not allowed (scheme or address refused)' },
  source_fetch_failed: { status: 422, title: 'The source URL could not be fetched' },
  source_stalled: { status: 504, title: 'The source URL did not deliver the file in time' },
  request_timeout: { status: 408, title: 'The request did not arrive in time' },
  uri_too_long: { status: 414, title: 'The request path is too long' },
  headers_too_large: { status: 431, title: 'The request headers are too large' },
  rate_limited: { status: 429, title: 'Too many requests for this API key; retry after the given time' },
  storage_full: { status: 507, title: 'Storage is full' },
  storage_unavailable: { status: 503, title: 'Storage is not available' },
  service_unavailable: { status: 503, title: 'A dependency (Redis) is not available' },
  // Catch-all
  internal_error: { status: 500, title: 'Internal error' },
} as const satisfies Record<string, { status: number; title: string }>;

export type ErrorCode = keyof typeof errorCatalogue;

export interface ErrorDetails {
  /** Field or path the error is about (profile field, CLI option). */
  field?: string;
  [key: string]: unknown;
}

export class EarmarkError extends Error {
  readonly code: ErrorCode;
  readonly details: ErrorDetails;

  constructor(code: ErrorCode, message: string, details: ErrorDetails = {}, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'EarmarkError';
    this.code = code;
    this.details = details;
  }

  get status(): number {
    return errorCatalogue[this.code].status;
  }
}

export function isEarmarkError(value: unknown): value is EarmarkError {
  return value instanceof EarmarkError;
}

/** Wraps anything thrown into an EarmarkError so callers only ever see catalogue codes. */
export function toEarmarkError(value: unknown): EarmarkError {
  if (value instanceof EarmarkError) return value;
  const message = value instanceof Error ? value.message : String(value);
  return new EarmarkError('internal_error', message, {}, { cause: value });
}
