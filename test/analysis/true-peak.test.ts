import { describe, expect, it } from 'vitest';
import { ANNEX2_GAIN_BOUND, ANNEX2_PHASE0, ANNEX2_PHASE1, TruePeakMeter } from '../../src/analysis/true-peak.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';
import { dbToAmplitude } from '../../src/analysis/units.ts';
import { naiveTruePeak } from '../helpers/naive-true-peak.ts';

const info = (channels: number, sampleRate = 48000) => ({
  sampleRate,
  channels,
  channelLabels: Array.from({ length: channels }, () => 'unknown' as const),
});

describe('TruePeakMeter (ITU-R BS.1770-5 Annex 2)', () => {
  it('uses the Annex 2 example filter: phase sums 1.00159 and 0.97302 (Annex 2, section 3)', () => {
    const sum = (h: number[]) => h.reduce((s, v) => s + v, 0);
    expect(sum(ANNEX2_PHASE0)).toBeCloseTo(1.00159, 5);
    expect(sum(ANNEX2_PHASE1)).toBeCloseTo(0.97302, 5);
    expect(ANNEX2_GAIN_BOUND).toBeGreaterThan(1.7);
  });

  it('matches a direct four-phase evaluation exactly on programme, brick-wall loud and quiet material, any block size', () => {
    for (const levelDbfs of [-30, -12, -3]) {
      const [block] = [
        ...programmeBlocks({ sampleRate: 48000, channels: 2, seconds: 3, seed: 11, levelDbfs, blockFrames: 1 << 20 }),
      ];
      // Hard-limit the loud variant so most spans sit near the ceiling.
      const channels = block.channelData.map((x) => x.map((v) => Math.max(-0.9, Math.min(0.9, v))));
      const expected = channels.map((x) => naiveTruePeak(x).peak);
      for (const blockFrames of [1, 255, 4096, channels[0].length]) {
        const meter = new TruePeakMeter(info(2), { overCeilingDbtp: -1 });
        for (let start = 0; start < channels[0].length; start += blockFrames) {
          const frames = Math.min(blockFrames, channels[0].length - start);
          meter.push({ channelData: channels.map((x) => x.subarray(start, start + frames)), frames });
        }
        const result = meter.result();
        result.channelTruePeakDbtp.forEach((db, c) =>
          expect(Math.abs(10 ** (db! / 20) - expected[c])).toBeLessThan(1e-12),
        );
      }
    }
  });

  it('reports every over above the ceiling, merged into spans, and none in pruned spans', () => {
    const [block] = [
      ...programmeBlocks({ sampleRate: 48000, channels: 1, seconds: 4, seed: 5, levelDbfs: -9, blockFrames: 1 << 20 }),
    ];
    const x = block.channelData[0];
    const ceilingDbtp = -3;
    const naive = naiveTruePeak(x).perSample;
    const overSamples = naive.filter((v) => 20 * Math.log10(v) > ceilingDbtp).length;
    const meter = new TruePeakMeter(info(1), { overCeilingDbtp: ceilingDbtp, overMergeSeconds: 0, maxEvents: 1e6 });
    meter.push(block);
    const result = meter.result();
    const counted = result.events.reduce((s, e) => s + (e.count ?? 0), 0);
    expect(overSamples).toBeGreaterThan(0);
    expect(counted).toBe(overSamples);
    expect(result.events.every((e) => e.kind === 'true_peak_over' && e.peakValue! > ceilingDbtp)).toBe(true);
  });

  it('gives every interpolated over bit for bit as the scalar S/D arithmetic does, on a limited master, odd blocks', () => {
    // The scalar form of the kernel's arithmetic: halved pair sums and differences, added in tap order.
    const pairs = (h: number[], sign: number) => h.slice(0, 6).map((v, k) => 0.5 * (v + sign * h[11 - k]));
    const [s0, d0, s1, d1] = [
      pairs(ANNEX2_PHASE0, 1),
      pairs(ANNEX2_PHASE0, -1),
      pairs(ANNEX2_PHASE1, 1),
      pairs(ANNEX2_PHASE1, -1),
    ];
    const [block] = [
      ...programmeBlocks({ sampleRate: 48000, channels: 1, seconds: 2, seed: 7, levelDbfs: 0, blockFrames: 1 << 20 }),
    ];
    // Gain into a ceiling, as a brick-wall limiter leaves it: every chunk reaches the ceiling.
    const ceiling = 10 ** (-1 / 20);
    const x = block.channelData[0].map((v) => Math.max(-ceiling, Math.min(ceiling, 4 * v)));
    const tap = (n: number) => (n >= 0 ? x[n] : 0);
    const perFrame = Float64Array.from(x, (_, n) => {
      const dot = (w: number[], sign: number) =>
        w.reduce((sum, wk, k) => sum + wk * (tap(n - k) + sign * tap(n - 11 + k)), 0);
      const even = Math.abs(dot(s0, 1)) + Math.abs(dot(d0, -1));
      const odd = Math.abs(dot(s1, 1)) + Math.abs(dot(d1, -1));
      return Math.max(even, odd, Math.abs(x[n]));
    });
    // At -1 dBTP most frames sit just under the ceiling; a ceiling 1e-10 dB under a frame's value
    // makes it an over by far less than float32 rounding, which the kernel's screening must still
    // hand to the exact arithmetic.
    const near = [...perFrame].sort((a, b) => b - a)[500];
    for (const ceilingDbtp of [-1, 20 * Math.log10(near) - 1e-10]) {
      // Adjacent overs form one event (start, count, largest value); reported 6 frames earlier (the filter delay).
      const expected: number[][] = [];
      let last = -2;
      perFrame.forEach((v, n) => {
        if (!(v > dbToAmplitude(ceilingDbtp))) return;
        const run = expected.at(-1);
        if (run && n === last + 1) {
          run[1]++;
          run[2] = Math.max(run[2], v);
        } else expected.push([Math.max(0, n - 6), 1, v]);
        last = n;
      });
      for (const run of expected) run[2] = 20 * Math.log10(run[2]);
      expect(expected.length).toBeGreaterThan(ceilingDbtp === -1 ? 1000 : 100);
      for (const blockFrames of [1, 31, 16_385, x.length]) {
        const meter = new TruePeakMeter(info(1), { overCeilingDbtp: ceilingDbtp, overMergeSeconds: 0, maxEvents: 1e6 });
        for (let start = 0; start < x.length; start += blockFrames) {
          const frames = Math.min(blockFrames, x.length - start);
          meter.push({ channelData: [x.subarray(start, start + frames)], frames });
        }
        const result = meter.result();
        expect(result.events.map((e) => [e.startFrame, e.count, e.peakValue])).toEqual(expected);
        expect(10 ** (result.truePeakDbtp! / 20)).toBeCloseTo(Math.max(...perFrame), 12);
      }
      // A negative merge distance keeps every over its own event.
      const apart = new TruePeakMeter(info(1), { overCeilingDbtp: ceilingDbtp, overMergeSeconds: -1, maxEvents: 1e6 });
      apart.push({ channelData: [x], frames: x.length });
      const single = perFrame.filter((v) => v > dbToAmplitude(ceilingDbtp));
      expect(apart.result().events.map((e) => [e.count, e.peakValue])).toEqual(
        Array.from(single, (v) => [1, 20 * Math.log10(v)]),
      );
    }
  });

  it('never reads below the sample peak, and reads an intersample over above 0 dBTP (BS.1770-5 Annex 2)', () => {
    // fs/4 sine at 45 deg phase: samples at +-0.707 of amplitude 1.41, true peak about +3 dBTP (EBU Tech 3341 case 19).
    const frames = 4800;
    const x = Float32Array.from({ length: frames }, (_, n) => 1.41 * Math.sin((Math.PI / 2) * n + Math.PI / 4));
    const meter = new TruePeakMeter(info(1));
    meter.push({ channelData: [x], frames });
    const { truePeakDbtp } = meter.result();
    expect(truePeakDbtp!).toBeGreaterThan(20 * Math.log10(Math.max(...x.map(Math.abs))));
    expect(truePeakDbtp!).toBeGreaterThan(2.8);
  });

  it('gives null for digital silence', () => {
    const meter = new TruePeakMeter(info(2));
    meter.push({ channelData: [new Float32Array(1000), new Float32Array(1000)], frames: 1000 });
    expect(meter.result().truePeakDbtp).toBeNull();
    expect(meter.result().channelTruePeakDbtp).toEqual([null, null]);
  });
});
