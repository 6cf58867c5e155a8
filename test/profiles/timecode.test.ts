// SMPTE ST 12-1 labels. Drop-frame rule (ST 12-1): at 29.97 fps frame numbers 00 and 01 are
// skipped at the start of every minute except minutes 00, 10, 20, 30, 40, 50. Worked examples
// are handbook facts (common practice): 1800 frames = 00:01:00;02, 17982 frames = 00:10:00;00,
// one hour = 107892 frames. The 59.94 figures (4 numbers dropped) are from memory.

import { describe, expect, it } from 'vitest';
import {
  FRAME_RATES,
  frameRate,
  framesAtSample,
  timecodeAtSample,
  timecodeFromFrames,
} from '../../src/profiles/index.ts';

const df = FRAME_RATES['29.97-df'];

describe('timecode', () => {
  it('29.97 drop-frame worked examples (handbook, SMPTE ST 12-1 drop-frame rule)', () => {
    expect(timecodeFromFrames(0, df)).toBe('00:00:00;00');
    expect(timecodeFromFrames(1799, df)).toBe('00:00:59;29');
    expect(timecodeFromFrames(1800, df)).toBe('00:01:00;02');
    expect(timecodeFromFrames(17981, df)).toBe('00:09:59;29');
    expect(timecodeFromFrames(17982, df)).toBe('00:10:00;00');
    expect(timecodeFromFrames(17982 + 1800, df)).toBe('00:11:00;02');
    expect(timecodeFromFrames(107892, df)).toBe('01:00:00;00');
  });

  it('no minute label ;00 or ;01 exists except every tenth minute (SMPTE ST 12-1 drop-frame rule)', () => {
    const labels = new Set<string>();
    for (let n = 0; n < 107892; n++) labels.add(timecodeFromFrames(n, df));
    expect(labels.size).toBe(107892);
    expect(labels.has('00:01:00;00')).toBe(false);
    expect(labels.has('00:01:00;01')).toBe(false);
    expect(labels.has('00:20:00;00')).toBe(true);
  });

  it('59.94 drop-frame skips four numbers (from memory: ST 12-1 doubles the 29.97 rule)', () => {
    const rate = FRAME_RATES['59.94-df'];
    expect(timecodeFromFrames(3600, rate)).toBe('00:01:00;04');
    expect(timecodeFromFrames(35964, rate)).toBe('00:10:00;00');
  });

  it('non-drop rates count straight (SMPTE ST 12-1)', () => {
    expect(timecodeFromFrames(1800, FRAME_RATES['29.97-ndf'])).toBe('00:01:00:00');
    expect(timecodeFromFrames(90000, FRAME_RATES['25'])).toBe('01:00:00:00');
    expect(timecodeFromFrames(24 * 3600 * 25 + 3, FRAME_RATES['25'])).toBe('00:00:00:03'); // wraps at 24 h (time of day)
  });

  it('frames from samples are exact: 48048 samples at 48 kHz are 30 frames at 30000/1001 fps', () => {
    expect(framesAtSample(48048, 48000, df)).toBe(30);
    expect(framesAtSample(48047, 48000, df)).toBe(29);
    expect(framesAtSample(600000, 48000, FRAME_RATES['25'])).toBe(312); // 12.5 s -> frame 312
    expect(timecodeAtSample(600000, 48000, FRAME_RATES['25'], 10 * 3600 * 48000)).toBe('10:00:12:12');
  });

  it('rejects an unknown rate with a typed error', () => {
    expect(() => frameRate('29.97')).toThrowError(
      expect.objectContaining({ code: 'invalid_argument', details: { field: 'fps' } }),
    );
  });
});
