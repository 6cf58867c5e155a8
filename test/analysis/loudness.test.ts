import { describe, expect, it } from 'vitest';
import type { ChannelLabel, PcmBlock } from '../../src/analysis/audio.ts';
import { kthSmallestAbove, LoudnessMeter } from '../../src/analysis/loudness.ts';
import { programmeBlocks, seededRandom, toneBlocks, type ToneSegment } from '../../src/selftest/signals.ts';

function measure(labels: ChannelLabel[], blocks: Iterable<PcmBlock>, sampleRate = 48000) {
  const meter = new LoudnessMeter({ sampleRate, channels: labels.length, channelLabels: labels });
  for (const block of blocks) meter.push(block);
  return meter.result();
}

const fullScale997 = (channels: number, loudChannel: number, seconds = 10, sampleRate = 48000) =>
  toneBlocks({
    sampleRate,
    channels,
    segments: [
      {
        seconds,
        frequencyHz: 997,
        peakDbfs: Array.from({ length: channels }, (_, c) => (c === loudChannel ? 0 : null)),
      } as ToneSegment,
    ],
  });

describe('LoudnessMeter (ITU-R BS.1770-5)', () => {
  it('reads a 0 dBFS 997 Hz sine in one front channel as -3.01 LKFS (BS.1770-5, text after eq. (7))', () => {
    expect(measure(['M'], fullScale997(1, 0)).integratedLufs).toBeCloseTo(-3.01, 1);
    expect(Math.abs(measure(['M'], fullScale997(1, 0)).integratedLufs! + 3.01)).toBeLessThan(0.05);
    expect(Math.abs(measure(['L', 'R'], fullScale997(2, 0)).integratedLufs! + 3.01)).toBeLessThan(0.05);
    expect(
      Math.abs(measure(['L', 'R', 'C', 'LFE', 'Ls', 'Rs'], fullScale997(6, 2)).integratedLufs! + 3.01),
    ).toBeLessThan(0.05);
  });

  it('holds -3.01 LKFS at 44.1, 88.2, 96 and 192 kHz too (BS.1770-5 Annex 1: same response at every rate)', () => {
    for (const rate of [44100, 88200, 96000, 192000]) {
      expect(Math.abs(measure(['M'], fullScale997(1, 0, 4, rate), rate).integratedLufs! + 3.01)).toBeLessThan(0.05);
    }
  });

  it('weights a surround channel by 1.41 (+1.49 dB) and excludes LFE (BS.1770-5 Table 3)', () => {
    const labels: ChannelLabel[] = ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'];
    const inSurround = measure(labels, fullScale997(6, 4)).integratedLufs!;
    expect(inSurround - -3.0103).toBeCloseTo(10 * Math.log10(1.41), 2);
    expect(measure(labels, fullScale997(6, 3)).integratedLufs).toBeNull();
  });

  it('gives null, never -Infinity, for digital silence and for programme below the absolute gate (BS.1770-5 eq. (6))', () => {
    const silent = measure(
      ['L', 'R'],
      toneBlocks({ sampleRate: 48000, channels: 2, segments: [{ seconds: 5, peakDbfs: null }] }),
    );
    expect(silent.integratedLufs).toBeNull();
    expect(silent.loudnessRangeLu).toBeNull();
    expect(silent.maxMomentaryLufs).toBeNull();
    expect(silent.momentaryLufs.length).toBe(50);
    expect(silent.momentaryLufs.every((v) => Number.isNaN(v))).toBe(true);
    const quiet = measure(
      ['L', 'R'],
      toneBlocks({ sampleRate: 48000, channels: 2, segments: [{ seconds: 5, peakDbfs: -75 }] }),
    );
    expect(quiet.integratedLufs).toBeNull();
    expect(quiet.maxMomentaryLufs).toBeCloseTo(-75, 0);
    expect(JSON.stringify(quiet)).not.toContain('Infinity');
  });

  it('leaves the series empty (NaN, null in the document) once the windows hold only the silence after a tone, never a value at or below -70 LUFS (BS.1770-5 eq. (6))', () => {
    // After sound stops the K filter's output decays through ever smaller powers (it read -3157.70 LUFS).
    const r = measure(
      ['L', 'R'],
      toneBlocks({
        sampleRate: 48000,
        channels: 2,
        segments: [
          { seconds: 5, frequencyHz: 997, peakDbfs: [-20, -20] },
          { seconds: 10, peakDbfs: null },
        ],
      }),
    );
    expect(r.momentaryLufs.length).toBe(150);
    // Value k ends at (k + 1) / 10 s. The 5.0-5.4 s window (k = 53) still holds the filter's ring-down
    // of the tone (-62.7 LUFS, a real reading); from 5.1-5.5 s on it read -250.8 falling to -3168.7.
    // Short-term windows lie in the silence from k = 79 (5.0-8.0 s, which read -71.4).
    expect([...r.momentaryLufs.subarray(54)].every(Number.isNaN)).toBe(true);
    expect([...r.shortTermLufs.subarray(79)].every(Number.isNaN)).toBe(true);
    for (const series of [r.momentaryLufs, r.shortTermLufs])
      for (const v of series) if (!Number.isNaN(v)) expect(v).toBeGreaterThan(-70);
    // Two channels of a -20 dBFS sine: -23.01 LKFS each, summed +3.01 dB (BS.1770-5 eqs. (2), (4)).
    expect(r.momentaryLufs[45]).toBeCloseTo(-20, 1);
    // The gated reading is what it was before series points were gated (-20.13: the fade's blocks
    // at -21.3 to -26.0 pass the relative gate; the silence never passed the absolute one).
    expect(r.integratedLufs).toBeCloseTo(-20.13, 2);
  });

  it('uses only complete 400 ms blocks: a 300 ms file has no integrated or momentary value (BS.1770-5 eq. (3))', () => {
    const short = measure(
      ['M'],
      toneBlocks({ sampleRate: 48000, channels: 1, segments: [{ seconds: 0.3, peakDbfs: -20 }] }),
    );
    expect(short.integratedLufs).toBeNull();
    expect(short.maxMomentaryLufs).toBeNull();
    expect(short.gatingBlocks).toBe(0);
  });

  it('steps gating blocks every 100 ms with 75 % overlap (BS.1770-5 eq. (3)): 10 s gives 97 blocks', () => {
    const result = measure(
      ['M'],
      toneBlocks({ sampleRate: 48000, channels: 1, segments: [{ seconds: 10, peakDbfs: -20 }] }),
    );
    expect(result.gatingBlocks).toBe(97);
    expect(result.momentaryLufs).toHaveLength(100);
    expect(result.shortTermLufs).toHaveLength(100);
    // No value until the 400 ms / 3 s windows are full (NaN marks 'none'), then the tone's level.
    expect(result.momentaryLufs[2]).toBeNaN();
    expect(result.momentaryLufs[3]).toBeCloseTo(-23.01, 1); // 1 kHz at -20 dBFS peak: 20 dB under the -3.01 of BS.1770-5 (text after eq. (7))
    expect(result.shortTermLufs[28]).toBeNaN();
    expect(result.shortTermLufs[29]).toBeCloseTo(-23.01, 1);
  });

  it('gives the same readings however the stream is cut into blocks', () => {
    const spec = { sampleRate: 44100, channels: 2, seconds: 8, seed: 3 };
    const whole = measure(['L', 'R'], programmeBlocks({ ...spec, blockFrames: 1 << 20 }), 44100);
    for (const blockFrames of [1, 997, 4096]) {
      const cut = measure(['L', 'R'], programmeBlocks({ ...spec, blockFrames }), 44100);
      expect(cut.integratedLufs!).toBeCloseTo(whole.integratedLufs!, 9);
      expect(cut.maxMomentaryLufs!).toBeCloseTo(whole.maxMomentaryLufs!, 9);
      expect(cut.maxShortTermLufs!).toBeCloseTo(whole.maxShortTermLufs!, 9);
      expect(cut.loudnessRangeLu!).toBeCloseTo(whole.loudnessRangeLu!, 9);
    }
  });

  it('finds the loudest momentary window to the sample, not on the 100 ms grid (EBU Tech 3341 case 13 rationale)', () => {
    // 400 ms of -23 dBFS stereo starting 50 ms off the grid, a 100 ms grid would read -23.58.
    const result = measure(
      ['L', 'R'],
      toneBlocks({
        sampleRate: 48000,
        channels: 2,
        segments: [
          { seconds: 0.05, peakDbfs: null },
          { seconds: 0.4, peakDbfs: -23 },
          { seconds: 1, peakDbfs: null },
        ],
      }),
    );
    expect(result.maxMomentaryLufs!).toBeCloseTo(-23, 1);
    expect(result.maxMomentaryAtSeconds!).toBeCloseTo(0.45, 3);
  });

  it('reports stretches of short-term loudness above a limit as events (EBU Tech 3343 short-form max short-term rule)', () => {
    // 10 s at -30 dBFS, 5 s at -12 dBFS, 10 s at -30 dBFS stereo: 1 kHz, so LUFS ~ dBFS.
    const meter = new LoudnessMeter(
      { sampleRate: 48000, channels: 2, channelLabels: ['L', 'R'] },
      { shortTermLimitLufs: -18 },
    );
    for (const block of toneBlocks({
      sampleRate: 48000,
      channels: 2,
      segments: [
        { seconds: 10, peakDbfs: -30 },
        { seconds: 5, peakDbfs: -12 },
        { seconds: 10, peakDbfs: -30 },
      ],
    }))
      meter.push(block);
    const { events } = meter.result();
    expect(events).toHaveLength(1);
    expect(events[0].kind).toBe('loud_short_term');
    expect(events[0].peakValue!).toBeCloseTo(-12, 0);
    // The first window over the limit ends shortly after 10 s; the last starts before 15 s.
    expect(events[0].startSeconds).toBeGreaterThan(7);
    expect(events[0].startSeconds).toBeLessThan(10);
    expect(events[0].endSeconds).toBeGreaterThan(15);
    expect(events[0].endSeconds).toBeLessThan(18.1);
  });
});

describe('kthSmallestAbove (the LRA percentiles without a sort or a copy)', () => {
  it('picks what sorting the values above the gate puts at each index: ties, sorted, reversed, random, gated-out and NaN values, one value', () => {
    const random = seededRandom(9);
    const inputs: [Float64Array, number][] = [
      [Float64Array.from({ length: 1001 }, () => random()), 0],
      [Float64Array.from({ length: 1001 }, () => random() * 1e-3), 2e-4],
      [Float64Array.from({ length: 500 }, (_, i) => i + 1), 0],
      [Float64Array.from({ length: 500 }, (_, i) => 500 - i), 100],
      [Float64Array.from({ length: 300 }, (_, i) => (i % 3) + 1), 1],
      [Float64Array.from({ length: 50 }, (_, i) => (i % 5 === 0 ? Number.NaN : 1 / (i + 1))), 0.01],
      [new Float64Array([42]), 0],
    ];
    for (const [input, gate] of inputs) {
      const above = input.filter((v) => v > gate).sort();
      const largest = above[above.length - 1];
      for (const k of [0, 1, Math.floor(above.length / 10), Math.floor(above.length * 0.95), above.length - 1].filter(
        (i) => i < above.length,
      )) {
        expect(kthSmallestAbove(input, gate, largest, k)).toBe(above[k]);
      }
    }
  });
});
