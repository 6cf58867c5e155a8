// One catalogue of error codes. Every layer throws EarmarkError with one of these codes;
// the CLI maps them to exit codes and stderr lines, the API to problem+json (RFC 9457).

/**
 * `retryable`: a queued job that fails with this code is tried again with backoff (the fault may
 * pass); otherwise it fails at once. `retryAfterSeconds`: the API sends Retry-After with it.
 */
export interface CatalogueEntry {
  status: number;
  title: string;
  retryable: boolean;
  retryAfterSeconds?: number;
}

export const errorCatalogue = {
  // Input files
  empty_file: { status: 422, title: 'The file is empty', retryable: false },
  unsupported_format: { status: 415, title: 'The file is not in an audio format Earmark reads', retryable: false },
  unsupported_encoding: {
    status: 415,
    title: 'The container is known but its sample encoding is not supported',
    retryable: false,
  },
  corrupt_file: { status: 422, title: 'The file is damaged or inconsistent', retryable: false },
  decoded_size_exceeded: {
    status: 413,
    title: 'The decoded audio is larger than the configured cap',
    retryable: false,
  },
  file_not_found: { status: 404, title: 'The file does not exist or cannot be read', retryable: false },
  layout_mismatch: {
    status: 422,
    title: 'The declared channel layout has a different channel count from the file',
    retryable: false,
  },
  markers_need_wave: {
    status: 422,
    title: 'Markers can be written only into a WAVE, RF64 or BW64 file (within its size limit)',
    retryable: false,
  },
  // Arguments and profiles
  invalid_argument: { status: 400, title: 'An argument is invalid', retryable: false },
  invalid_profile: { status: 400, title: 'The delivery profile is invalid', retryable: false },
  unknown_profile: { status: 422, title: 'No delivery profile has this id', retryable: false },
  // Service (HTTP API, queue, workers)
  validation_failed: { status: 400, title: 'The request does not match its schema', retryable: false },
  unauthorized: { status: 401, title: 'A valid API key is required', retryable: false },
  forbidden: { status: 403, title: 'The API key lacks the scope for this operation', retryable: false },
  not_found: { status: 404, title: 'No such resource', retryable: false },
  idempotency_conflict: {
    status: 409,
    title: 'The Idempotency-Key was used with a different request',
    retryable: false,
  },
  report_not_ready: { status: 409, title: 'The job has not completed, so it has no report yet', retryable: false },
  payload_too_large: { status: 413, title: 'The upload is larger than the configured limit', retryable: false },
  unsupported_media_type: { status: 415, title: 'The request body type is not accepted here', retryable: false },
  source_refused: { status: 422, title: 'The URL is not allowed (scheme or address refused)', retryable: false },
  source_fetch_failed: { status: 422, title: 'The source URL could not be fetched', retryable: true },
  source_stalled: { status: 504, title: 'The source URL did not deliver the file in time', retryable: true },
  request_timeout: { status: 408, title: 'The request did not arrive in time', retryable: false },
  uri_too_long: { status: 414, title: 'The request path is too long', retryable: false },
  headers_too_large: { status: 431, title: 'The request headers are too large', retryable: false },
  rate_limited: {
    status: 429,
    title: 'Too many requests for this API key; retry after the given time',
    retryable: false,
  },
  cancelled: { status: 499, title: 'The work was cancelled before it finished', retryable: false },
  webhook_failed: { status: 502, title: 'The callback URL did not accept the notification', retryable: true },
  direct_upload_unavailable: {
    status: 501,
    title: 'Direct uploads need the object-store backend',
    retryable: false,
  },
  upload_incomplete: { status: 409, title: 'Nothing has been uploaded for this uploadId yet', retryable: false },
  job_not_finished: { status: 409, title: 'The job has not finished yet', retryable: false },
  audio_expired: { status: 404, title: "The job's stored audio is past its retention period", retryable: false },
  signoff_not_allowed: { status: 409, title: 'Only a warn or fail verdict can be signed off', retryable: false },
  package_member_failed: { status: 422, title: 'A file of the package failed its own check', retryable: false },
  package_wait_exceeded: {
    status: 504,
    title: "The package's files did not all finish within the package wait",
    retryable: false,
  },
  storage_full: { status: 507, title: 'Storage is full', retryable: true, retryAfterSeconds: 5 },
  storage_unavailable: { status: 503, title: 'Storage is not available', retryable: true, retryAfterSeconds: 5 },
  service_unavailable: {
    status: 503,
    title: 'A service Earmark depends on is not available',
    retryable: true,
    retryAfterSeconds: 5,
  },
  speech_model_unavailable: {
    status: 500,
    title: "The speech detector's model could not be loaded (dialogue loudness needs it)",
    retryable: false,
  },
  // Catch-all
  internal_error: { status: 500, title: 'Internal error', retryable: true },
} as const satisfies Record<string, CatalogueEntry>;

export type ErrorCode = keyof typeof errorCatalogue;

/** One entry, widened so optional fields read uniformly. */
export function catalogueEntry(code: ErrorCode): CatalogueEntry {
  return errorCatalogue[code];
}

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

export function isErrorCode(value: unknown): value is ErrorCode {
  return typeof value === 'string' && Object.hasOwn(errorCatalogue, value);
}

/** What crosses a thread or process boundary: structured, never a "code: message" string. */
export interface WireError {
  code: ErrorCode;
  message: string;
  details: ErrorDetails;
}

export function toWireError(value: unknown): WireError {
  const error = toEarmarkError(value);
  return { code: error.code, message: error.message, details: error.details };
}

/** The WireError in a value that came across a boundary, or null when it is not one. */
export function parseWireError(value: unknown): WireError | null {
  if (!value || typeof value !== 'object' || !('code' in value) || !('message' in value)) return null;
  const { code, message } = value;
  if (!isErrorCode(code) || typeof message !== 'string') return null;
  const details = 'details' in value && value.details && typeof value.details === 'object' ? { ...value.details } : {};
  return { code, message, details };
}

/** Reads a WireError back; anything that is not one becomes internal_error with its text. */
export function fromWireError(value: unknown): EarmarkError {
  const wire = parseWireError(value);
  if (wire) return new EarmarkError(wire.code, wire.message, wire.details);
  return new EarmarkError('internal_error', typeof value === 'string' ? value : 'an error arrived in an unknown shape');
}

/** Whether a job failing with this error may succeed on another try. */
export function isRetryable(error: EarmarkError): boolean {
  return typeof error.details.transient === 'boolean' ? error.details.transient : errorCatalogue[error.code].retryable;
}

/** The `code` of a Node system error (ENOENT, EEXIST...), read without trusting the thrown value's type. */
export function errnoCode(error: unknown): string | undefined {
  if (typeof error !== 'object' || error === null || !('code' in error)) return undefined;
  return typeof error.code === 'string' ? error.code : undefined;
}
