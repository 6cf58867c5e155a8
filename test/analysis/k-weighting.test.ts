import { describe, expect, it } from 'vitest';
import { biquadGain, channelWeight, highpassCoefficients, shelfCoefficients } from '../../src/analysis/k-weighting.ts';

describe('K-weighting derived for any sample rate', () => {
  it('reproduces the published 48 kHz stage 1 coefficients (ITU-R BS.1770-5 Annex 1, Table 1)', () => {
    const shelf = shelfCoefficients(48000);
    expect(shelf.b0).toBeCloseTo(1.53512485958697, 12);
    expect(shelf.b1).toBeCloseTo(-2.69169618940638, 12);
    expect(shelf.b2).toBeCloseTo(1.19839281085285, 12);
    expect(shelf.a1).toBeCloseTo(-1.69065929318241, 12);
    expect(shelf.a2).toBeCloseTo(0.73248077421585, 12);
  });

  it('reproduces the published 48 kHz stage 2 coefficients (ITU-R BS.1770-5 Annex 1, Table 2)', () => {
    const hp = highpassCoefficients(48000);
    expect([hp.b0, hp.b1, hp.b2]).toEqual([1, -2, 1]);
    expect(hp.a1).toBeCloseTo(-1.99004745483398, 12);
    expect(hp.a2).toBeCloseTo(0.99007225036621, 12);
  });

  it('keeps the 48 kHz frequency response at 44.1 and 96 kHz (BS.1770-5 Annex 1: "same frequency response")', () => {
    const response = (rate: number, f: number) =>
      20 * Math.log10(biquadGain(shelfCoefficients(rate), f, rate) * biquadGain(highpassCoefficients(rate), f, rate));
    for (const f of [20, 100, 997, 2000, 8000, 15000]) {
      expect(Math.abs(response(44100, f) - response(48000, f))).toBeLessThan(0.05);
      expect(Math.abs(response(96000, f) - response(48000, f))).toBeLessThan(0.05);
    }
    // BS.1770-5 Note 1 to eq. (2): the -0.691 offset cancels the filter's +0.691 dB at 997 Hz.
    expect(response(48000, 997)).toBeCloseTo(0.691, 2);
  });

  it('derives 44.1 kHz coefficients equal to those computed from the same prototype (check sheet, computed values)', () => {
    const shelf = shelfCoefficients(44100);
    const hp = highpassCoefficients(44100);
    expect(shelf.b0).toBeCloseTo(1.53084123005035, 12);
    expect(shelf.a1).toBeCloseTo(-1.66365511325602, 12);
    expect(hp.a1).toBeCloseTo(-1.9891696736298, 12);
    expect(hp.a2).toBeCloseTo(0.98919903578704, 12);
  });

  it('weights channels per BS.1770-5 Table 3: L/R/C 1.0, surrounds 1.41, LFE excluded', () => {
    expect(channelWeight('L')).toBe(1);
    expect(channelWeight('C')).toBe(1);
    expect(channelWeight('Ls')).toBe(1.41);
    expect(channelWeight('Rs')).toBe(1.41);
    expect(channelWeight('LFE')).toBe(0);
  });
});
