// The reference meters against the documents they are written from, on their own: the published
// K-weighting and Annex 2 coefficients, and readings the standards state for simple signals.
import { describe, expect, it } from 'vitest';
import { ANNEX2_PHASE0, ANNEX2_PHASE1 } from '../../src/analysis/true-peak.ts';
import {
  derivedStages,
  referenceLoudness,
  TABLE1_48K,
  TABLE2_48K,
} from '../helpers/reference-meters/loudness-reference.ts';
import { ANNEX2_PHASES, reconstructedReadings, referenceTruePeak } from '../helpers/reference-meters/peak-reference.ts';
import { frameReadings } from '../helpers/reference-meters/reconstructed-peak.ts';
import { seededRandom } from '../../src/selftest/signals.ts';

const sine = (rate: number, hz: number, amplitude: number, seconds: number, phase = 0) =>
  Float32Array.from(
    { length: Math.round(seconds * rate) },
    (_, i) => amplitude * Math.sin((2 * Math.PI * hz * i) / rate + phase),
  );

describe('K-weighting', () => {
  it('the derivation for other rates gives ITU-R BS.1770-5 Annex 1 Tables 1 and 2 back at 48 kHz', () => {
    const [shelf, highpass] = derivedStages(48_000);
    for (const [derived, table] of [
      [shelf, TABLE1_48K],
      [highpass, TABLE2_48K],
    ] as const) {
      // The tables print 14 decimals.
      for (const key of ['b0', 'b1', 'b2', 'a1', 'a2'] as const)
        expect(Math.abs(derived[key] - table[key]), key).toBeLessThan(1e-13);
    }
  });

  it.each([48_000, 44_100])(
    'a 0 dBFS 997 Hz sine in one front channel reads -3.01 LKFS (BS.1770-5 Annex 1, after eq. (7)), %i Hz',
    (rate) => {
      const left = sine(rate, 997, 1, 2);
      const { integratedLufs } = referenceLoudness([left, new Float32Array(left.length)], ['L', 'R'], rate);
      expect(Math.abs((integratedLufs ?? Number.NaN) - -3.01)).toBeLessThan(0.01);
    },
  );

  it('stereo 1 kHz at -23 dBFS reads -23 LUFS momentary, short-term and integrated (EBU Tech 3341 Table 1 case 1, +-0.1 LU)', () => {
    const x = sine(48_000, 1000, 10 ** (-23 / 20), 20);
    const r = referenceLoudness([x, x], ['L', 'R'], 48_000);
    for (const value of [r.integratedLufs, r.maxMomentaryLufs, r.maxShortTermLufs])
      expect(Math.abs((value ?? Number.NaN) - -23)).toBeLessThan(0.1);
  });

  it('20 s at -20 dBFS then 20 s at -30 dBFS has a 10 LU loudness range (EBU Tech 3342 Table 1 case 1, +-1 LU)', () => {
    const x = Float32Array.from([...sine(48_000, 1000, 0.1, 20), ...sine(48_000, 1000, 10 ** (-30 / 20), 20)]);
    const { loudnessRangeLu } = referenceLoudness([x, x], ['L', 'R'], 48_000);
    expect(Math.abs((loudnessRangeLu ?? Number.NaN) - 10)).toBeLessThan(1);
  });

  it('5.0 at L, R -28, C -24, Ls, Rs -30 dBFS reads -23 LUFS: the surround weights (EBU Tech 3341 Table 1 case 6, +-0.1 LU)', () => {
    const at = (dbfs: number) => sine(48_000, 1000, 10 ** (dbfs / 20), 20);
    const { integratedLufs } = referenceLoudness(
      [at(-28), at(-28), at(-24), at(-30), at(-30)],
      ['L', 'R', 'C', 'Ls', 'Rs'],
      48_000,
    );
    expect(Math.abs((integratedLufs ?? Number.NaN) - -23)).toBeLessThan(0.1);
  });

  it('gates: digital silence has no loudness; LFE is left out (BS.1770-5 Table 3)', () => {
    const silent = new Float32Array(48_000);
    expect(referenceLoudness([silent], ['M'], 48_000).integratedLufs).toBeNull();
    const tone = sine(48_000, 1000, 0.5, 1);
    expect(referenceLoudness([silent, tone], ['L', 'LFE'], 48_000).integratedLufs).toBeNull();
  });
});

describe('true peak', () => {
  it("the Annex 2 columns are the meter's published phases, phases 2 and 3 their mirror images (BS.1770-5 Annex 2)", () => {
    expect(ANNEX2_PHASES[0]).toEqual(ANNEX2_PHASE0);
    expect(ANNEX2_PHASES[1]).toEqual(ANNEX2_PHASE1);
    expect(ANNEX2_PHASES[2]).toEqual([...ANNEX2_PHASE1].reverse());
    expect(ANNEX2_PHASES[3]).toEqual([...ANNEX2_PHASE0].reverse());
  });

  // EBU Tech 3341 Table 1 cases 16 and 19: fs/4 sampled 45 degrees off its peaks (no sample at
  // the peak), 0.50 and 1.41 of full scale, read -6.0 and +3.0 dBTP within +0.2/-0.4 dB.
  it.each([
    [0.5, -6],
    [1.41, 3],
  ])(
    'a sine at fs/4, 45 degrees, %f of full scale reads %f dBTP (EBU Tech 3341 cases 16, 19)',
    (amplitude, expectedDbtp) => {
      const x = sine(48_000, 12_000, amplitude, 0.1, Math.PI / 4);
      const { channelPeaks } = referenceTruePeak([x, x], 48_000, 0);
      const dbtp = 20 * Math.log10(Math.max(...channelPeaks));
      expect(dbtp - expectedDbtp).toBeGreaterThan(-0.4);
      expect(dbtp - expectedDbtp).toBeLessThan(0.2);
      expect(20 * Math.log10(Math.max(...x))).toBeLessThan(expectedDbtp - 2.9); // the samples alone read 3 dB low
    },
  );
});

describe('reconstructed peak', () => {
  it('the one-pass grid reads what the frame-by-frame reference reads', () => {
    const random = seededRandom(3);
    const x = Float32Array.from({ length: 6_000 }, (_, i) =>
      Math.max(-1, Math.min(1, 1.5 * Math.sin(i * 0.9) * Math.sin(i * 0.001) + 0.1 * (random() - 0.5))),
    );
    expect(Array.from(reconstructedReadings(x))).toEqual(Array.from(frameReadings(x)));
  });
});
