// The report page's "what to do" for a failed job: one table keyed by catalogue code, with a hint
// of its own for every code a job can fail with.
import { describe, expect, it } from 'vitest';
import { errorCatalogue, isErrorCode } from '../../src/errors/index.ts';
import { FAILURE_HINTS, failureHint } from '../../src/views/assets/format.js';

/** Codes the worker can end a job with (decode, profile, source, storage, cancellation, the catch-all). */
const JOB_FAILURE_CODES = [
  'empty_file',
  'unsupported_format',
  'unsupported_encoding',
  'corrupt_file',
  'decoded_size_exceeded',
  'file_not_found',
  'layout_mismatch',
  'payload_too_large',
  'invalid_profile',
  'unknown_profile',
  'invalid_argument',
  'source_refused',
  'source_fetch_failed',
  'source_stalled',
  'cancelled',
  'storage_full',
  'storage_unavailable',
  'service_unavailable',
  'speech_model_unavailable',
  'internal_error',
];

describe('failure hints', () => {
  it('are keyed by catalogue codes only', () => {
    for (const code of Object.keys(FAILURE_HINTS)) expect(isErrorCode(code), code).toBe(true);
  });

  it('give every code a job can fail with its own hint', () => {
    for (const code of JOB_FAILURE_CODES) {
      expect(isErrorCode(code), code).toBe(true);
      expect(Object.hasOwn(FAILURE_HINTS, code), code).toBe(true);
      expect(failureHint(code)).toBe(FAILURE_HINTS[code]);
    }
    expect(Object.keys(errorCatalogue).length).toBeGreaterThan(JOB_FAILURE_CODES.length);
  });

  it('say what to do in the words the operator needs', () => {
    expect(failureHint('unsupported_format')).toMatch(/^Re-export the audio as WAV or FLAC/);
    expect(failureHint('source_fetch_failed')).toMatch(/^Check the URL/);
    // An unknown code (a newer worker) still gets the catch-all, never nothing.
    expect(failureHint('no_such_code')).toBe(FAILURE_HINTS.internal_error);
    expect(failureHint('toString')).toBe(FAILURE_HINTS.internal_error);
  });
});
