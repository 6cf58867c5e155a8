// SMPTE ST 12-1 timecode from sample positions. Frames are counted exactly in integers
// (floor(samples * fpsNumerator / (sampleRate * fpsDenominator))), so no float rounding moves
// a flag into the next frame. Drop-frame (29.97, 59.94) skips frame numbers 00-01 (00-03 at
// 59.94) at the start of every minute except minutes divisible by ten; labels wrap at 24 h.

import { EarmarkError } from '../errors/index.ts';
import { FRAME_RATE_IDS, type FrameRateId } from './types.ts';

export interface FrameRate {
  id: FrameRateId;
  /** Frame numbers per second on the label (30 for 29.97). */
  nominalFps: number;
  fpsNumerator: number;
  fpsDenominator: number;
  /** Frame numbers skipped per minute; 0 = non-drop. */
  dropFrames: number;
}

export const FRAME_RATES: Record<FrameRateId, FrameRate> = {
  '23.976': { id: '23.976', nominalFps: 24, fpsNumerator: 24000, fpsDenominator: 1001, dropFrames: 0 },
  '24': { id: '24', nominalFps: 24, fpsNumerator: 24, fpsDenominator: 1, dropFrames: 0 },
  '25': { id: '25', nominalFps: 25, fpsNumerator: 25, fpsDenominator: 1, dropFrames: 0 },
  '29.97-df': { id: '29.97-df', nominalFps: 30, fpsNumerator: 30000, fpsDenominator: 1001, dropFrames: 2 },
  '29.97-ndf': { id: '29.97-ndf', nominalFps: 30, fpsNumerator: 30000, fpsDenominator: 1001, dropFrames: 0 },
  '30': { id: '30', nominalFps: 30, fpsNumerator: 30, fpsDenominator: 1, dropFrames: 0 },
  '50': { id: '50', nominalFps: 50, fpsNumerator: 50, fpsDenominator: 1, dropFrames: 0 },
  '59.94-df': { id: '59.94-df', nominalFps: 60, fpsNumerator: 60000, fpsDenominator: 1001, dropFrames: 4 },
  '59.94-ndf': { id: '59.94-ndf', nominalFps: 60, fpsNumerator: 60000, fpsDenominator: 1001, dropFrames: 0 },
  '60': { id: '60', nominalFps: 60, fpsNumerator: 60, fpsDenominator: 1, dropFrames: 0 },
};

export function frameRate(id: string, field = 'fps'): FrameRate {
  if (!(FRAME_RATE_IDS as readonly string[]).includes(id)) {
    throw new EarmarkError('invalid_argument', `frame rate "${id}" is not one of ${FRAME_RATE_IDS.join(', ')}`, {
      field,
    });
  }
  return FRAME_RATES[id as FrameRateId];
}

/** Whole frames elapsed at a sample position (integer arithmetic; exact for any file length). */
export function framesAtSample(sample: number, sampleRate: number, rate: FrameRate): number {
  const num = BigInt(Math.floor(sample)) * BigInt(rate.fpsNumerator);
  return Number(num / (BigInt(sampleRate) * BigInt(rate.fpsDenominator)));
}

/** Frame count since 00:00:00:00 -> label. Drop-frame adds back the skipped numbers. */
export function timecodeFromFrames(frameCount: number, rate: FrameRate): string {
  const fps = rate.nominalFps;
  const perDay = fps * 86400 - rate.dropFrames * (60 - 6) * 24;
  let n = ((Math.floor(frameCount) % perDay) + perDay) % perDay;
  if (rate.dropFrames > 0) {
    const d = rate.dropFrames;
    const perMinute = fps * 60 - d;
    const perTenMinutes = fps * 600 - 9 * d;
    const tens = Math.floor(n / perTenMinutes);
    const rest = n % perTenMinutes;
    n += 9 * d * tens + (rest > d ? d * Math.floor((rest - d) / perMinute) : 0);
  }
  const ff = n % fps;
  const totalSeconds = Math.floor(n / fps);
  const two = (v: number) => String(v).padStart(2, '0');
  const hh = Math.floor(totalSeconds / 3600);
  const mm = Math.floor(totalSeconds / 60) % 60;
  const ss = totalSeconds % 60;
  return `${two(hh)}:${two(mm)}:${two(ss)}${rate.dropFrames > 0 ? ';' : ':'}${two(ff)}`;
}

/** Label at a sample position of the file, counted from the BWF time reference when there is one. */
export function timecodeAtSample(
  sample: number,
  sampleRate: number,
  rate: FrameRate,
  timeReferenceSamples: number | null = null,
): string {
  return timecodeFromFrames(framesAtSample(sample + (timeReferenceSamples ?? 0), sampleRate, rate), rate);
}
