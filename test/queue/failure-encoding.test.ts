// A failed job's reason crosses the process boundary as a WireError in JSON; the plain
// "code: message" form (failed jobs kept in Redis may hold it) reads too, anything else is internal_error.
import { describe, expect, it } from 'vitest';
import { decodeFailure, decodeFailureError, encodeFailure } from '../../src/queue/contract.ts';

describe('failure encoding', () => {
  it('round-trips code, message (colons included) and details', () => {
    const reason = encodeFailure('invalid_argument', 'channelRelations.windowSeconds: must be > 0', {
      field: 'channelRelations.windowSeconds',
    });
    expect(JSON.parse(reason)).toEqual({
      code: 'invalid_argument',
      message: 'channelRelations.windowSeconds: must be > 0',
      details: { field: 'channelRelations.windowSeconds' },
    });
    expect(decodeFailureError(reason)).toEqual({
      code: 'invalid_argument',
      message: 'channelRelations.windowSeconds: must be > 0',
      details: { field: 'channelRelations.windowSeconds' },
    });
    expect(decodeFailure(reason)).toEqual({
      code: 'invalid_argument',
      message: 'channelRelations.windowSeconds: must be > 0',
    });
  });

  it('keeps the code when the details cannot be JSON', () => {
    expect(decodeFailureError(encodeFailure('corrupt_file', 'bad', { offset: 10n }))).toEqual({
      code: 'corrupt_file',
      message: 'bad',
      details: {},
    });
  });

  it('reads the plain "code: message" form', () => {
    expect(decodeFailure('corrupt_file: bad: header')).toEqual({ code: 'corrupt_file', message: 'bad: header' });
    expect(decodeFailure('cancelled: analysis was cancelled')).toEqual({
      code: 'cancelled',
      message: 'analysis was cancelled',
    });
  });

  it('a crash, a code not in the catalogue or JSON of another shape is internal_error, without paths', () => {
    expect(decodeFailure('Unexpected exit code: null signal: SIGKILL').code).toBe('internal_error');
    expect(decodeFailure('exploded: at /srv/storage/x.wav')).toEqual({
      code: 'internal_error',
      message: 'the analysis process ended unexpectedly (exploded: at …)',
    });
    expect(decodeFailure('{"code":"no_such_code","message":"m"}').code).toBe('internal_error');
    expect(decodeFailure('{not json').code).toBe('internal_error');
    expect(decodeFailure(undefined)).toEqual({
      code: 'internal_error',
      message: 'the analysis process ended unexpectedly',
    });
  });
});
