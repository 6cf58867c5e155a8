import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import {
  gridPhaseKernels,
  HALF_SAMPLE_TAPS,
  quarterPhaseTaps,
  RECONSTRUCTION_GAIN_BOUND,
  REFINEMENT_CAP,
  ReconstructedPeakMeter,
  STAGE2_HALF_WIDTH,
  type ReconstructedPeakOptions,
  type ReconstructedPeakResult,
} from '../../src/analysis/reconstructed-peak.ts';
import { TruePeakMeter } from '../../src/analysis/true-peak.ts';
import { complianceCases } from '../../src/selftest/cases.ts';
import { programmeBlocks, seededRandom } from '../../src/selftest/signals.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import {
  bandLimitedPeak,
  frameReadings,
  ReconstructedPeakMeter as PlainMeter,
} from '../helpers/reference-meters/reconstructed-peak.ts';
import {
  baselineReadings,
  ReconstructedPeakMeter as PreKernelMeter,
} from '../helpers/reference-meters/reconstructed-peak-baseline.ts';
import { BLOCK_CUTS, cut, expectClose, testSignals } from '../helpers/test-signals.ts';
import { hasTool } from '../helpers/tools.ts';

const RATES = [32000, 44100, 48000, 88200, 96000, 176400, 192000];
const info = (channels: number, sampleRate = 48000) => ({
  sampleRate,
  channels,
  channelLabels: Array.from({ length: channels }, () => 'unknown' as const),
});
const db = (v: number) => 20 * Math.log10(v);
const samplePeak = (x: Float32Array) => x.reduce((m, v) => Math.max(m, Math.abs(v)), 0);

function measure(
  channels: Float32Array[],
  sampleRate = 48000,
  options: ReconstructedPeakOptions = {},
  sizes = [1 << 20],
): ReconstructedPeakResult {
  const meter = new ReconstructedPeakMeter(info(channels.length, sampleRate), options);
  for (const block of cut(channels, sizes)) meter.push(block);
  return meter.result();
}
const peakOf = (x: Float32Array, sampleRate = 48000) => measure([x], sampleRate).peakDbtp!;

/** A sine with raised-cosine fades (no onset transient adds to its peak). */
function sine(
  sampleRate: number,
  hz: number,
  amplitude: number,
  phase: number,
  frames = 4096,
  fade = 1000,
): Float32Array {
  return Float32Array.from({ length: frames }, (_, n) => {
    const edge = Math.min(n, frames - 1 - n);
    const gain = edge < fade ? 0.5 - 0.5 * Math.cos((Math.PI * edge) / fade) : 1;
    return gain * amplitude * Math.sin((2 * Math.PI * hz * n) / sampleRate + phase);
  });
}

/**
 * A hot limited master that stays band-limited: pink-ish noise low-passed below 0.42 fs at -3 dBFS
 * RMS into a look-ahead limiter at -1 dBFS (gain: the minimum needed over +-32 frames, averaged
 * over the same span, so it never exceeds what each sample needs and varies slowly).
 */
function limitedMaster(frames: number, seed: number): Float32Array {
  const random = seededRandom(seed);
  const half = 127,
    band = 0.42;
  const lowpass = Float64Array.from({ length: 2 * half + 1 }, (_, i) => {
    const t = i - half,
      r = t / (half + 1);
    const sinc = t === 0 ? 1 : Math.sin(2 * Math.PI * band * t) / (2 * Math.PI * band * t);
    return 2 * band * sinc * (0.42 + 0.5 * Math.cos(Math.PI * r) + 0.08 * Math.cos(2 * Math.PI * r)); // Blackman
  });
  const white = Float64Array.from({ length: frames + 2 * half }, () => random() * 2 - 1);
  let state = 0;
  const noise = Float64Array.from({ length: frames }, (_, n) => {
    let y = 0;
    for (let k = 0; k < lowpass.length; k++) y += lowpass[k] * white[n + k];
    return (state = 0.9 * state + y);
  });
  const gain = 10 ** (-3 / 20) / Math.sqrt(noise.reduce((s, v) => s + v * v, 0) / frames);
  const ceiling = 10 ** (-1 / 20),
    hold = 32;
  const need = noise.map((v) => Math.min(1, ceiling / Math.abs(v * gain)));
  const span = (n: number, f: (k: number) => number, reduce: (a: number, b: number) => number, start: number) => {
    let acc = start;
    for (let k = n - hold; k <= n + hold; k++) acc = reduce(acc, k >= 0 && k < frames ? f(k) : 1);
    return acc;
  };
  const held = need.map((_, n) => span(n, (k) => need[k], Math.min, 1));
  return Float32Array.from(
    noise,
    (v, n) =>
      v *
      gain *
      (span(
        n,
        (k) => held[k],
        (a, b) => a + b,
        0,
      ) /
        (2 * hold + 1)),
  );
}

describe('ReconstructedPeakMeter: design and error budget', () => {
  it('stage 1 holds |1 - H(f)| <= 0.0026 to 0.45 fs (its Parks-McClellan design)', () => {
    let worst = 0;
    for (let f = 0; f <= 0.45; f += 0.0005) {
      const h = HALF_SAMPLE_TAPS.reduce((s, c, k) => s + 2 * c * Math.cos(2 * Math.PI * f * (k + 0.5)), 0);
      worst = Math.max(worst, Math.abs(1 - h));
    }
    expect(worst).toBeLessThan(0.0026);
  });

  it('every 8x grid phase is within 0.0027 (0.023 dB) of the ideal fractional delay to 0.45 fs', () => {
    let worst = 0;
    gridPhaseKernels().forEach((kernel, q) => {
      for (let f = 0; f <= 0.45; f += 0.0005) {
        let re = 0,
          im = 0;
        kernel.forEach((h, i) => {
          const w = 2 * Math.PI * f * (i - 17 - q / 8);
          re += h * Math.cos(w);
          im += h * Math.sin(w);
        });
        worst = Math.max(worst, Math.hypot(re - 1, im));
      }
    });
    expect(worst).toBeLessThan(0.0027);
    expect(RECONSTRUCTION_GAIN_BOUND).toBeCloseTo(2.5611, 3);
  });

  it('the parabola leaves at most 0.0035 dB of the 8x grid loss at 0.45 fs (BS.1770-5 Annex 2 Attachment 1: 20 log10 cos(pi f/n) = -0.136 dB)', () => {
    const w = (2 * Math.PI * 0.45) / 8;
    expect(db(Math.cos(w / 2))).toBeCloseTo(-0.1363, 3);
    let worst = 0;
    for (let offset = -0.5; offset <= 0.5; offset += 0.001) {
      const [a, b, c] = [-1, 0, 1].map((k) => Math.cos(w * (k - offset)));
      const vertex = Math.min(b + (a - c) ** 2 / (8 * (2 * b - a - c)), b * REFINEMENT_CAP);
      worst = Math.max(worst, Math.abs(db(vertex)));
    }
    expect(worst).toBeLessThan(0.0035);
  });
});

describe('ReconstructedPeakMeter: accuracy', () => {
  it("reads a sine at its amplitude within 0.05 dB at every rate, 997 Hz to 0.45 fs (handbook: a sampled sine's continuous peak is its amplitude)", () => {
    for (const rate of RATES) {
      for (const hz of [997, rate / 8, rate / 6, rate / 4, 0.4 * rate, 0.45 * rate]) {
        for (let p = 0; p < 6; p++) {
          const measured = peakOf(sine(rate, hz, 0.9, (p * Math.PI) / 6 + 0.01), rate);
          expect(Math.abs(measured - db(0.9)), `${rate} Hz, ${hz} Hz, phase ${p}`).toBeLessThan(0.05);
        }
      }
    }
  });

  it('32 kHz fs/6 at 0.9 FS reads -0.915 +-0.05 dBTP, where the Annex 2 example filter reads 0.3 dB low', () => {
    const x = sine(32000, 32000 / 6, 0.9, 0);
    expect(Math.abs(peakOf(x, 32000) - -0.915)).toBeLessThan(0.05); // handbook: the amplitude, 20 log10 0.9
    const annex = new TruePeakMeter(info(1, 32000));
    annex.push({ channelData: [x], frames: x.length });
    expect(annex.result().truePeakDbtp!).toBeLessThan(-1.15); // measured with true-peak.ts: -1.21
  });

  it('agrees with a 64x windowed-sinc reference within 0.05 dB: sines at every rate, a hot limited master, intersample overs', () => {
    const cases: [string, Float32Array, number][] = [];
    for (const rate of RATES) {
      cases.push([`${rate} fs/4 45deg`, sine(rate, rate / 4, 0.9, Math.PI / 4, 2048, 500), rate]);
      cases.push([`${rate} fs/6 60deg`, sine(rate, rate / 6, 0.9, Math.PI / 3, 2048, 500), rate]);
      cases.push([`${rate} fs/8 67.5deg`, sine(rate, rate / 8, 0.9, (3 * Math.PI) / 8, 2048, 500), rate]);
      cases.push([`${rate} 0.4 fs`, sine(rate, 0.4 * rate, 0.9, 0.7, 2048, 500), rate]);
    }
    for (const seed of [1, 2, 3])
      cases.push([`limited master ${seed}`, limitedMaster(4096, seed), [44100, 48000, 96000][seed - 1]]);
    // Intersample over: fs/4 at 45 degrees, samples at +-0.997, peak 1.41 (EBU Tech 3341 case 19).
    cases.push(['fs/4 1.41 FS', sine(48000, 12000, 1.41, Math.PI / 4, 2048, 500), 48000]);
    for (const [name, x, rate] of cases) {
      const reference = db(bandLimitedPeak(x).peak);
      expect(Math.abs(peakOf(x, rate) - reference), name).toBeLessThan(0.05);
    }
  });

  it('reads an intersample over above 0 dBTP: fs/4 at 45 degrees and 1.41 FS reads +2.98 dBTP (EBU Tech 3341 case 19)', () => {
    const x = sine(48000, 12000, 1.41, Math.PI / 4);
    expect(db(samplePeak(x))).toBeLessThan(0);
    expect(Math.abs(peakOf(x) - db(1.41))).toBeLessThan(0.05);
  });

  it('passes the true-peak cases of EBU Tech 3341 (cases 15-19, +0.2/-0.4 dB)', () => {
    const cases = complianceCases().filter((c) => c.reading === 'truePeak');
    expect(cases.map((c) => c.id)).toEqual(['3341-15', '3341-16', '3341-17', '3341-18', '3341-19']);
    for (const testCase of cases) {
      const meter = new ReconstructedPeakMeter(info(testCase.channels, testCase.sampleRate));
      for (const block of testCase.blocks()) meter.push(block);
      const measured = meter.result().peakDbtp!;
      expect(measured, testCase.source).toBeGreaterThanOrEqual(testCase.expected - testCase.toleranceBelow);
      expect(measured, testCase.source).toBeLessThanOrEqual(testCase.expected + testCase.toleranceAbove);
    }
  });

  it.skipIf(!hasTool('sox'))(
    'agrees with sox upsampling 16x (sox reference, within 0.05 dB plus its 16x grid loss)',
    async () => {
      const dir = mkdtempSync(join(tmpdir(), 'earmark-reconstructed-'));
      try {
        for (const [name, x, rate] of [
          ['limited master', limitedMaster(8192, 4), 48000],
          ['0.4 fs sine', sine(44100, 0.4 * 44100, 0.9, 0.3), 44100],
          ['fs/6 sine', sine(32000, 32000 / 6, 0.9, 0), 32000],
        ] as const) {
          const input = join(dir, 'in.wav'),
            output = join(dir, 'out.wav');
          // A quarter of the level (exact) keeps sox's fixed-point path clear of full scale.
          await writeWavFile(input, { sampleRate: rate, channels: 1, bitsPerSample: 32, float: true }, [
            [x.map((v) => v / 4)],
          ]);
          expect(
            spawnSync('sox', [input, '-e', 'floating-point', '-b', '32', output, 'rate', '-v', '-L', String(16 * rate)])
              .status,
          ).toBe(0);
          const stat = spawnSync('sox', [output, '-n', 'stat'], { encoding: 'utf8' }).stderr;
          const amplitude = (label: string) =>
            Math.abs(Number(new RegExp(`${label} amplitude:\\s+(\\S+)`).exec(stat)![1]));
          const soxDbtp = db(4 * Math.max(amplitude('Maximum'), amplitude('Minimum')));
          const gridLoss = -db(Math.cos((Math.PI * 0.45) / 16)); // 0.034 dB at most, BS.1770-5 Annex 2 Attachment 1
          const difference = peakOf(x, rate) - soxDbtp;
          expect(difference, name).toBeGreaterThan(-0.05);
          expect(difference, name).toBeLessThan(0.05 + gridLoss);
        }
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    },
  );
});

describe('ReconstructedPeakMeter: behaviour', () => {
  it('never reads below the sample peak, including full-band noise, clipping and fs/2', () => {
    const random = seededRandom(3);
    const signals = [
      Float32Array.from({ length: 5000 }, () => random() * 2 - 1),
      Float32Array.from({ length: 5000 }, () => Math.max(-0.5, Math.min(0.5, 3 * (random() - 0.5)))),
      Float32Array.from({ length: 999 }, (_, n) => (n % 2 ? 0.8 : -0.8)),
      Float32Array.from({ length: 3 }, (_, n) => (n === 1 ? -0.25 : 0)),
      Float32Array.of(0.5),
    ];
    for (const x of signals) {
      const result = measure([x, x.map((v) => -v / 2)]);
      expect(result.channelPeakDbtp[0]!).toBeGreaterThanOrEqual(db(samplePeak(x)));
      expect(result.channelPeakDbtp[1]!).toBeGreaterThanOrEqual(db(samplePeak(x) / 2));
    }
  });

  it('matches the plain evaluation of its own algorithm (no pruning) within 1e-9, overs included, and prunes', () => {
    const signals = testSignals(2, 1);
    for (const [name, channels] of Object.entries(signals)) {
      for (const overCeilingDbtp of [-1, -12]) {
        const options = { overCeilingDbtp, maxEvents: 1e6 };
        const plain = new PlainMeter(info(2), options);
        plain.push({ channelData: channels, frames: channels[0].length });
        const result = measure(channels, 48000, options);
        expectClose({ ...result, prunedFrames: 0 }, plain.result(), 1e-9, name);
        if (name === 'programme' && overCeilingDbtp === -1) expect(result.prunedFrames).toBeGreaterThan(0);
      }
    }
    // Streams shorter than the meter's latency, and around it.
    const random = seededRandom(9);
    for (const frames of [1, 5, 17, 18, 19, 40]) {
      const x = Float32Array.from({ length: frames }, () => random() - 0.5);
      const plain = new PlainMeter(info(1), { overCeilingDbtp: -12 });
      plain.push({ channelData: [x], frames });
      expectClose(
        { ...measure([x], 48000, { overCeilingDbtp: -12 }, [3]), prunedFrames: 0 },
        plain.result(),
        1e-9,
        `${frames} frames`,
      );
    }
  });

  it('gives the same result whatever the block sizes (single frames, odd sizes, empty pushes)', () => {
    const signals = testSignals(2, 2);
    for (const [name, channels] of Object.entries(signals)) {
      // Everything but the pruning count (chunks follow the blocks), to the bit.
      const read = (sizes?: number[]) => ({
        ...measure(channels, 48000, { overCeilingDbtp: -3 }, sizes),
        prunedFrames: 0,
      });
      const whole = read();
      for (const sizes of [...BLOCK_CUTS, [1], [31, 0, 33, 2]])
        expect(read(sizes), `${name} ${sizes.join(',')}`).toEqual(whole);
    }
  });

  it('gives null for digital silence and for an empty stream', () => {
    const silent = measure([new Float32Array(1000), new Float32Array(1000)]);
    expect(silent.peakDbtp).toBeNull();
    expect(silent.peakAtSeconds).toBeNull();
    expect(silent.channelPeakDbtp).toEqual([null, null]);
    const meter = new ReconstructedPeakMeter(info(2));
    meter.push({ channelData: [new Float32Array(0), new Float32Array(0)], frames: 0 });
    expect(meter.result()).toEqual({ ...silent, prunedFrames: 0 });
    expect(meter.result()).toBe(meter.result()); // read once, then the same object
  });

  it('reports overs above the ceiling as reconstructed_over events merged within overMergeSeconds, counting raw detections', () => {
    // Three 10 ms bursts of an fs/4 sine at 1.2 FS (+1.58 dBTP, samples at 0.85): at 0.1 s, 0.13 s and 0.4 s.
    const frames = 24000,
      x = new Float32Array(frames);
    for (const start of [4800, 6240, 19200]) x.set(sine(48000, 12000, 1.2, Math.PI / 4, 480, 100), start);
    const overFrames = frameReadings(x).filter((v) => db(v) > -1).length;
    const merged = measure([x], 48000, { overCeilingDbtp: -1 });
    expect(merged.events.map((e) => [e.kind, e.channel])).toEqual([
      ['reconstructed_over', 0],
      ['reconstructed_over', 0],
    ]);
    expect(merged.events[0].startSeconds).toBeGreaterThan(0.1);
    expect(merged.events[0].endSeconds).toBeLessThan(0.141);
    expect(merged.events[1].startSeconds).toBeGreaterThan(0.4);
    expect(merged.events.reduce((s, e) => s + e.count!, 0)).toBe(overFrames);
    for (const e of merged.events) expect(Math.abs(e.peakValue! - db(1.2))).toBeLessThan(0.05);
    expect(merged.eventsTotal).toBe(2);
    expect(merged.peakAtSeconds!).toBeGreaterThan(0.1);
    const apart = measure([x], 48000, { overCeilingDbtp: -1, overMergeSeconds: 0.01 });
    expect(apart.events).toHaveLength(3);
    const capped = measure([x], 48000, { overCeilingDbtp: -1, overMergeSeconds: 0.01, maxEvents: 1 });
    expect([capped.events.length, capped.eventsTotal]).toEqual([1, 3]);
    expect(measure([x], 48000, { overCeilingDbtp: 2 }).events).toEqual([]);
  });
});

describe('ReconstructedPeakMeter: the WebAssembly kernel changes no reading', () => {
  /** Both meters over the same blocks: every field but the pruning count, to the bit. */
  function expectSameAsPreKernel(
    channels: Float32Array[],
    sampleRate: number,
    options: ReconstructedPeakOptions,
    sizes: number[],
    name: string,
  ): ReconstructedPeakResult {
    const stream = info(channels.length, sampleRate);
    const optimised = new ReconstructedPeakMeter(stream, options),
      before = new PreKernelMeter(stream, options);
    for (const block of cut(channels, sizes)) {
      optimised.push(block);
      before.push(block);
    }
    const result = optimised.result();
    expect({ ...result, prunedFrames: 0 }, name).toEqual({ ...before.result(), prunedFrames: 0 });
    return result;
  }

  it('equals the pre-kernel meter on limited, clipped, quiet and full-band material, every ceiling and block cut', () => {
    const random = seededRandom(17);
    const ceiling = 10 ** (-1 / 20);
    // The benchmark's brick-wall master: programme +12 dB into a hard limit at -1 dBFS.
    const hot = [
      ...programmeBlocks({ sampleRate: 48000, channels: 2, seconds: 3, seed: 7, levelDbfs: -16, blockFrames: 1 << 20 }),
    ][0].channelData.map((x) => x.map((v) => Math.max(-ceiling, Math.min(ceiling, v * 4))));
    const signals: Record<string, [Float32Array[], number]> = {
      ...Object.fromEntries(Object.entries(testSignals(2, 3)).map(([name, channels]) => [name, [channels, 48000]])),
      hot: [hot, 48000],
      'limited 44.1k mono': [[limitedMaster(40000, 5)], 44100],
      'limited 96k, three channels': [
        [limitedMaster(30000, 6), limitedMaster(30000, 7).map((v) => -v / 3), new Float32Array(30000)],
        96000,
      ],
      'full-band noise': [
        [
          Float32Array.from({ length: 20000 }, () => random() * 2 - 1),
          Float32Array.from({ length: 20000 }, () => (random() - 0.5) * 1e-3),
        ],
        48000,
      ],
      'fs/2 and fs/4 at 1.41': [
        [
          Float32Array.from({ length: 5000 }, (_, n) => (n % 2 ? 0.9 : -0.9)),
          sine(48000, 12000, 1.41, Math.PI / 4, 5000, 100),
        ],
        48000,
      ],
    };
    for (const [name, [channels, rate]] of Object.entries(signals)) {
      for (const overCeilingDbtp of [-1, -6, 0.5]) {
        for (const sizes of [[1 << 20], [16384], [16385, 31, 1, 40000], [1000], [1, 3, 35, 36, 37, 500]]) {
          expectSameAsPreKernel(
            channels,
            rate,
            { overCeilingDbtp, maxEvents: 1e6 },
            sizes,
            `${name} ${overCeilingDbtp} dBTP ${sizes.join(',')}`,
          );
        }
      }
    }
  });

  it('equals the pre-kernel meter where a loud onset follows a stretch skipped whole (readings whose taps reach into it)', () => {
    const random = seededRandom(29);
    // A burst sets the maximum, quiet noise fills whole kernel pieces and blocks (skipped: its bound
    // is below the ceiling and the maximum), then a tone and two clicks start pieces and blocks of
    // every cut below (16384 k, 20 k, 612 k). Every over is an event of its own, and the ceiling is
    // low enough that the readings whose taps reach back into the skipped stretch are overs.
    const x = Float32Array.from({ length: 90000 }, (_, n) => (n < 2000 ? 0.9 : 1e-6) * (random() - 0.5));
    x.set(sine(48000, 3000, 0.5, 0.3, 3000, 10), 32768);
    x[61200] = 0.9;
    x[81920] = -0.9;
    const options = { overCeilingDbtp: -100, overMergeSeconds: -1, maxEvents: 1e6 };
    for (const sizes of [[1 << 20], [16384], [1, 3, 35, 36, 37, 500], [20]]) {
      const result = expectSameAsPreKernel([x, x.map((v) => -v)], 48000, options, sizes, `onsets ${sizes.join(',')}`);
      expect(result.prunedFrames).toBeGreaterThan(40000);
    }
  });

  it("every frame's reading equals the pre-kernel one to the bit (a ceiling far below the signal makes each frame an event of its own)", () => {
    const random = seededRandom(23);
    const x = Float32Array.from(limitedMaster(20000, 8), (v, n) => (n > 15000 ? (random() - 0.5) * 2 : v));
    // A negative merge window keeps every over apart; nothing can be pruned below this ceiling.
    const options = { overCeilingDbtp: -200, overMergeSeconds: -1, maxEvents: 1e6 };
    for (const sizes of [[1 << 20], [16383, 7]]) {
      const result = expectSameAsPreKernel(
        [x, x.map((v) => v / 8)],
        48000,
        options,
        sizes,
        `per frame ${sizes.join(',')}`,
      );
      expect(result.eventsTotal).toBe(2 * 20000);
      expect(result.prunedFrames).toBe(0);
    }
  });
});

describe('ReconstructedPeakMeter: the float32 screen changes no reading', () => {
  it("the sums of |weights| its margin proof uses (kernels/reconstructed-peak.wat) are the filters' own", () => {
    // Stage 1: sum |c| over the 32 taps; stage 2: sum (|s| + |d|) and sum |h| of the pair weights.
    expect(2 * HALF_SAMPLE_TAPS.reduce((sum, c) => sum + Math.abs(c), 0)).toBeLessThan(2.5612);
    const g1 = quarterPhaseTaps(1),
      g2 = quarterPhaseTaps(2),
      w = STAGE2_HALF_WIDTH - 1;
    const pairs = [0, 1, 2, 3];
    const sd = pairs.reduce((sum, k) => sum + Math.max(Math.abs(g1[w + 1 + k]), Math.abs(g1[w - k])), 0);
    expect(sd).toBeLessThan(1.0654); // |s| + |d| = max(|g1[w + 1 + k]|, |g1[w - k]|)
    expect(pairs.reduce((sum, k) => sum + Math.abs(g2[w + 1 + k]), 0)).toBeLessThan(0.7842);
  });

  const hardLimited = (channels: number, seconds: number, seed: number): Float32Array[] => {
    const ceiling = 10 ** (-1 / 20);
    const [block] = programmeBlocks({
      sampleRate: 48000,
      channels,
      seconds,
      seed,
      levelDbfs: -16,
      blockFrames: 1 << 22,
    });
    // Programme +12 dB into a hard limit at -1 dBFS: clipped runs sit one float32 step below the ceiling.
    return block.channelData.map((x, c) =>
      x.map((v) => Math.max(-ceiling, Math.min(ceiling, v * (c % 3 === 2 ? 2 : 4)))),
    );
  };

  function expectSame(channels: Float32Array[], options: ReconstructedPeakOptions, sizes: number[], name: string) {
    const stream = info(channels.length);
    const optimised = new ReconstructedPeakMeter(stream, options),
      before = new PreKernelMeter(stream, options);
    for (const block of cut(channels, sizes)) {
      optimised.push(block);
      before.push(block);
    }
    const result = optimised.result();
    expect({ ...result, prunedFrames: 0 }, name).toEqual({ ...before.result(), prunedFrames: 0 });
    return result;
  }

  it('equals the pre-kernel meter on a hard-limited master: 1, 2 and 6 channels, odd blocks, merge distances that take each path', () => {
    for (const channels of [1, 2, 6]) {
      const x = hardLimited(channels, 1, 40 + channels);
      // 0.05 s merges runs of overs a vector at a time; 0, 2 frames and -1 s take the per-frame path.
      for (const overMergeSeconds of [0.05, 0, 2 / 48000, -1]) {
        for (const sizes of overMergeSeconds === 0.05
          ? [[1 << 20], [16385, 31, 1, 40000], [7, 1000, 333]]
          : [[7, 1000, 333]]) {
          const result = expectSame(
            x,
            { overCeilingDbtp: -1, overMergeSeconds, maxEvents: 1e6 },
            sizes,
            `${channels} ch, merge ${overMergeSeconds} s, ${sizes.join(',')}`,
          );
          expect(result.eventsTotal).toBeGreaterThan(0);
        }
      }
    }
  });

  it('equals the pre-kernel meter with the ceiling within a few ulps of frame readings (tiny margins either side)', () => {
    const [x] = hardLimited(1, 1, 51);
    const readings = baselineReadings(x);
    // The largest readings, and readings just above the clip level, as ceilings: dBTP and back to
    // amplitude lands within a few ulps of the reading, on either side.
    const sorted = Array.from(readings).sort((a, b) => b - a);
    const picks = [sorted[0], sorted[1], sorted[100], sorted[Math.floor(sorted.length * 0.1)], 10 ** (-1 / 20)];
    for (const reading of picks) {
      for (const nudgeDb of [0, 1e-13, -1e-13]) {
        const overCeilingDbtp = 20 * Math.log10(reading) + nudgeDb;
        expectSame(
          [x, x.map((v) => -v)],
          { overCeilingDbtp, maxEvents: 1e6 },
          [4097, 13],
          `ceiling ${overCeilingDbtp}`,
        );
      }
    }
  });

  it('equals the pre-kernel meter on sines whose peaks sit at the gate (amplitude at the ceiling, samples clipped one float32 step below it)', () => {
    const ceiling = 10 ** (-1 / 20);
    const signals: [string, Float32Array][] = [
      ['997 Hz at the ceiling', sine(48000, 997, ceiling, 0.3, 24000, 100)],
      ['fs/4 at 45 degrees, peak at the ceiling', sine(48000, 12000, ceiling, Math.PI / 4, 24000, 100)],
      ['fs/6 a hair below', sine(48000, 8000, ceiling * (1 - 1e-7), 0.1, 24000, 100)],
      ['0.45 fs a hair above', sine(48000, 0.45 * 48000, ceiling * (1 + 1e-7), 0.2, 24000, 100)],
      [
        'clipped 1 kHz',
        sine(48000, 1000, 2 * ceiling, 0, 24000, 100).map((v) => Math.max(-ceiling, Math.min(ceiling, v))),
      ],
    ];
    for (const [name, x] of signals) {
      for (const overMergeSeconds of [0.05, 0]) {
        for (const sizes of [[1 << 20], [1, 3, 35, 36, 37, 500]]) {
          expectSame(
            [x],
            { overCeilingDbtp: -1, overMergeSeconds, maxEvents: 1e6 },
            sizes,
            `${name} ${sizes.join(',')}`,
          );
        }
      }
    }
  });

  it('equals the pre-kernel meter where a steady tone (chunks taken whole) and a hard-limited master (screened) alternate', () => {
    const [limited] = hardLimited(1, 1, 71);
    const tone = sine(48000, 997, 0.8, 0.4, 30000, 100);
    const x = new Float32Array(2 * tone.length + limited.length);
    x.set(tone);
    x.set(limited, tone.length);
    x.set(tone, tone.length + limited.length);
    for (const overCeilingDbtp of [-1, -3])
      for (const sizes of [[1 << 20], [16385, 31, 1, 40000]])
        expectSame(
          [x, x.map((v) => v / 2)],
          { overCeilingDbtp, maxEvents: 1e6 },
          sizes,
          `${overCeilingDbtp} dBTP ${sizes.join(',')}`,
        );
  });

  it("equals the pre-kernel meter where the taps leave the screen's range (2^-90 .. 2^100: huge and tiny float samples)", () => {
    const random = seededRandom(61);
    const huge = Float32Array.from({ length: 5000 }, () => (random() - 0.5) * 1e35);
    const tiny = Float32Array.from({ length: 5000 }, () => (random() - 0.5) * 1e-30);
    for (const overCeilingDbtp of [-1, 700, -700])
      expectSame([huge, tiny], { overCeilingDbtp, maxEvents: 1e6 }, [1000, 4001], `${overCeilingDbtp} dBTP`);
  });
});
