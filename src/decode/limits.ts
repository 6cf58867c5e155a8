// Limits every decoder applies to the channel count and sample rate a header declares.
import { EarmarkError } from '../errors/index.ts';

export const MAX_SAMPLE_RATE = 1_536_000;
/** K-weighting's 1.68 kHz shelf needs a Nyquist frequency above it; lower rates make the meters' filters unstable (NaN). */
export const MIN_SAMPLE_RATE = 4000;
export const MAX_CHANNELS = 64;

/** Validates the numbers every header shares; throws corrupt_file on nonsense. */
export function checkStreamNumbers(what: string, channels: number, sampleRate: number): void {
  if (channels === 0) throw new EarmarkError('corrupt_file', `${what} declares 0 channels`);
  if (channels > MAX_CHANNELS)
    throw new EarmarkError('corrupt_file', `${what} declares ${channels} channels (more than ${MAX_CHANNELS})`);
  if (!Number.isFinite(sampleRate) || sampleRate < 1 || sampleRate > MAX_SAMPLE_RATE) {
    throw new EarmarkError('corrupt_file', `${what} declares an impossible sample rate of ${sampleRate} Hz`);
  }
  if (sampleRate < MIN_SAMPLE_RATE)
    throw new EarmarkError(
      'unsupported_encoding',
      `${what} declares ${sampleRate} Hz; rates below ${MIN_SAMPLE_RATE} Hz are not supported`,
    );
}
