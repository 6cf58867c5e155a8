import { describe, expect, it } from 'vitest';
import type { ChannelLabel } from '../../src/analysis/audio.ts';
import { DEFAULT_DOWNMIX_GAIN_DB, DownmixMeter, loRoMatrix, type DownmixOptions } from '../../src/analysis/downmix.ts';
import { LoudnessMeter } from '../../src/analysis/loudness.ts';
import { EarmarkError } from '../../src/errors/index.ts';
import { BLOCK_CUTS, cut, expectClose } from '../helpers/test-signals.ts';

const RATE = 48_000;
const FIVE_ONE: ChannelLabel[] = ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'];
const db10 = (x: number) => 10 * Math.log10(x);

/** 997 Hz sines: per channel an amplitude and a phase in radians (0 = silent channel when amplitude 0). */
function sines(channels: { amplitude: number; phase?: number }[], seconds = 10): Float32Array[] {
  const frames = seconds * RATE;
  return channels.map(({ amplitude, phase = 0 }) => {
    const x = new Float32Array(frames);
    if (amplitude !== 0)
      for (let i = 0; i < frames; i++) x[i] = amplitude * Math.sin((2 * Math.PI * 997 * i) / RATE + phase);
    return x;
  });
}

function run(
  labels: ChannelLabel[],
  data: Float32Array[],
  options: DownmixOptions = { enabled: true },
  sizes = [65_536],
) {
  const meter = new DownmixMeter({ sampleRate: RATE, channels: labels.length, channelLabels: labels }, options);
  for (const block of cut(data, sizes)) meter.push(block);
  return meter.result();
}

function programmeLoudness(labels: ChannelLabel[], data: Float32Array[]): number | null {
  const meter = new LoudnessMeter({ sampleRate: RATE, channels: labels.length, channelLabels: labels });
  for (const block of cut(data, [65_536])) meter.push(block);
  return meter.result().integratedLufs;
}

const onlyIn = (labels: ChannelLabel[], wanted: Partial<Record<ChannelLabel, number>>) =>
  labels.map((l) => ({ amplitude: wanted[l] ?? 0 }));

// A 997 Hz sine of amplitude A in channels of weight Gi reads 10 log10(sum Gi A^2 / 2) LKFS: the
// K-filter's gain at 997 Hz offsets the -0.691 of ITU-R BS.1770-5 eq. (2) (text after eq. (7)).
// Within 0.01 LU of the closed form.
const LKFS_TOLERANCE = 0.01;

describe('Lo/Ro downmix (ITU-R BS.775 Table 2; ATSC A/52 section 7.8, clev = slev = -3 dB)', () => {
  it('has the 1/sqrt(2) default gains and the Lo/Ro matrix of BS.775, LFE omitted', () => {
    expect(DEFAULT_DOWNMIX_GAIN_DB).toBeCloseTo(-3.0103, 4);
    const matrix = loRoMatrix(FIVE_ONE, {
      centreGainDb: DEFAULT_DOWNMIX_GAIN_DB,
      surroundGainDb: DEFAULT_DOWNMIX_GAIN_DB,
      lfeGainDb: null,
    });
    if (typeof matrix === 'string') throw new Error(matrix);
    const h = Math.SQRT1_2;
    const expected = [
      [1, 0],
      [0, 1],
      [h, h],
      [0, 0],
      [h, 0],
      [0, h],
    ];
    matrix.forEach((row, c) => {
      expect(row[0]).toBeCloseTo(expected[c][0], 12);
      expect(row[1]).toBeCloseTo(expected[c][1], 12);
    });
  });

  it('a sine only in C at amplitude A downmixes to 0.707 A in both Lo and Ro', () => {
    const A = 0.5;
    const r = run(FIVE_ONE, sines(onlyIn(FIVE_ONE, { C: A })));
    expect(r.kind).toBe('lo_ro');
    // Two channels of weight 1 at 0.707 A: 10 log10(2 (A/sqrt2)^2 / 2) = 10 log10(A^2 / 2).
    expect(Math.abs(r.integratedLufs! - db10((A * A) / 2))).toBeLessThan(LKFS_TOLERANCE);
    // BS.1770-5 Annex 2 true peak of a sine of peak 0.707 A: at or above the sample peak, within 0.1 dB (common practice).
    expect(Math.abs(r.truePeakDbtp! - 20 * Math.log10(Math.SQRT1_2 * A))).toBeLessThan(0.1);
    expect(r.clipRuns).toBe(0);
  });

  it('sums L and Ls in phase into Lo: (1 + 0.707) A', () => {
    const A = 0.25;
    const r = run(FIVE_ONE, sines(onlyIn(FIVE_ONE, { L: A, Ls: A })));
    const lo = (1 + Math.SQRT1_2) * A;
    expect(Math.abs(r.integratedLufs! - db10((lo * lo) / 2))).toBeLessThan(LKFS_TOLERANCE);
  });

  it('omits LFE by default and takes it at the profile gain when one is given', () => {
    const data = sines(onlyIn(FIVE_ONE, { LFE: 0.5 }));
    expect(run(FIVE_ONE, data).integratedLufs).toBeNull();
    const withLfe = run(FIVE_ONE, data, { enabled: true, lfeGainDb: 0 });
    expect(Math.abs(withLfe.integratedLufs! - db10(2 * (0.25 / 2)))).toBeLessThan(LKFS_TOLERANCE);
  });

  it('takes the centre gain from the options: 0 dB puts A in both outputs', () => {
    const A = 0.5;
    const r = run(FIVE_ONE, sines(onlyIn(FIVE_ONE, { C: A })), { enabled: true, centreGainDb: 0 });
    expect(r.gains.centreGainDb).toBe(0);
    expect(Math.abs(r.integratedLufs! - db10(A * A))).toBeLessThan(LKFS_TOLERANCE);
  });

  it('reports a run of downmix samples at or over full scale with its start and end (closed form)', () => {
    // L = C = 0.6 on frames [1000, 2000): Lo = 0.6 + 0.707 * 0.6 = 1.024 there, Ro = 0.424.
    const data = FIVE_ONE.map(() => new Float32Array(RATE));
    for (const c of [0, 2]) data[c].fill(0.6, 1000, 2000);
    const r = run(FIVE_ONE, data);
    expect(r.clipRuns).toBe(1);
    expect(r.clippedSamples).toBe(1000);
    expect(r.longestClipRunSamples).toBe(1000);
    expect(r.events).toHaveLength(1);
    const [e] = r.events;
    expect(e).toMatchObject({ kind: 'downmix_clipping', channel: null, startFrame: 1000, endFrame: 2000 });
    expect(e.peakValue).toBeCloseTo(20 * Math.log10(Math.fround(0.6) * (1 + Math.SQRT1_2)), 5);
    expect(r.eventsByKind).toEqual({ downmix_clipping: 1 });
  });

  it('reads the same whatever the block cuts (within 1e-9: the loudness sums run in kernel pieces)', () => {
    const data = sines(onlyIn(FIVE_ONE, { L: 0.3, C: 0.6, Rs: 0.4 }), 4);
    const reference = run(FIVE_ONE, data);
    for (const sizes of BLOCK_CUTS) expectClose(run(FIVE_ONE, data, { enabled: true }, sizes), reference);
  });

  it('reads 7.1 (side and rear surrounds into their side) and refuses a layout it cannot fold', () => {
    const labels: ChannelLabel[] = ['L', 'R', 'C', 'LFE', 'Lrs', 'Rrs', 'Lss', 'Rss'];
    const A = 0.25;
    const r = run(labels, sines(onlyIn(labels, { Lrs: A, Lss: A })));
    const lo = 2 * Math.SQRT1_2 * A;
    expect(Math.abs(r.integratedLufs! - db10((lo * lo) / 2))).toBeLessThan(LKFS_TOLERANCE);
    const quad = run(['L', 'R', 'Tfl', 'Tfr'], sines(onlyIn(['L', 'R', 'Tfl', 'Tfr'], { L: 0.5 }), 1));
    expect(quad.kind).toBeNull();
    expect(quad.note).toMatch(/Tfl, Tfr/);
  });

  it('refuses a gain that is not a number of dB in range with a typed error', () => {
    const info = { sampleRate: RATE, channels: 6, channelLabels: FIVE_ONE };
    for (const bad of [Number.NaN, Number.POSITIVE_INFINITY, -61, 21]) {
      expect(() => new DownmixMeter(info, { enabled: true, centreGainDb: bad })).toThrow(EarmarkError);
      expect(() => new DownmixMeter(info, { enabled: true, lfeGainDb: bad })).toThrow(/lfeGainDb/);
    }
  });

  it('does nothing unless asked', () => {
    const r = run(FIVE_ONE, sines(onlyIn(FIVE_ONE, { C: 0.5 }), 1), {});
    expect(r).toMatchObject({ enabled: false, kind: null, integratedLufs: null, channelIntegratedLufs: null });
  });
});

describe('mono compatibility of stereo: M = L + R, loss = stereo loudness - mono loudness', () => {
  // For L = A sin(wt), R = A sin(wt + phi): the mono sum has power A^2 (1 + cos phi) against the
  // stereo A^2, so the loss is -10 log10(1 + cos phi) LU (closed form; the K-filter gain cancels).
  const loss = (phi: number) => {
    const data = sines([{ amplitude: 0.5 }, { amplitude: 0.5, phase: phi }]);
    const r = run(['L', 'R'], data);
    expect(r.kind).toBe('mono_sum');
    const stereo = programmeLoudness(['L', 'R'], data);
    return { stereo, mono: r.integratedLufs, lossLu: r.integratedLufs === null ? null : stereo! - r.integratedLufs };
  };

  it('in phase (identical L and R): the mono sum is 3.01 LU louder, a loss of -3.01 LU', () => {
    expect(loss(0).lossLu).toBeCloseTo(-db10(2), 3);
  });

  it('uncorrelated (quadrature, correlation 0): no loss', () => {
    expect(loss(Math.PI / 2).lossLu).toBeCloseTo(0, 3);
  });

  it('120 degrees apart: a loss of 3.01 LU', () => {
    expect(loss((2 * Math.PI) / 3).lossLu).toBeCloseTo(db10(2), 3);
  });

  it('inverted R: the mono sum cancels to silence and has no loudness', () => {
    const { stereo, mono } = loss(Math.PI);
    expect(stereo).not.toBeNull();
    expect(mono).toBeNull();
  });
});

describe('per-channel integrated loudness (not summable: BS.1770 gates after summing)', () => {
  it('reads each channel alone with weight 1.0, LFE included', () => {
    const A = 0.5;
    const data = sines(onlyIn(FIVE_ONE, { C: A, Ls: A / 2, LFE: A }));
    const r = run(FIVE_ONE, data, { enabled: true, channelLoudness: true });
    const readings = r.channelIntegratedLufs!;
    expect(readings[0]).toBeNull();
    expect(Math.abs(readings[2]! - db10((A * A) / 2))).toBeLessThan(LKFS_TOLERANCE);
    expect(Math.abs(readings[4]! - db10((A * A) / 8))).toBeLessThan(LKFS_TOLERANCE);
    expect(Math.abs(readings[3]! - db10((A * A) / 2))).toBeLessThan(LKFS_TOLERANCE);
    // The programme weighs Ls 1.41 and leaves LFE out (BS.1770-5 Table 3): not the sum of the channels' readings.
    const programme = programmeLoudness(FIVE_ONE, data)!;
    expect(Math.abs(programme - db10((A * A) / 2 + (1.41 * A * A) / 8))).toBeLessThan(LKFS_TOLERANCE);
  });
});
