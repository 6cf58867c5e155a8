// The WebAssembly kernels: the committed .wasm.ts files are what `npm run kernels` makes from the
// .wat sources, and each kernel computes exactly what the scalar JavaScript loop it replaced did.
import { readdirSync, readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { highpassCoefficients, shelfCoefficients } from '../../src/analysis/k-weighting.ts';
import {
  KERNEL_FRAMES,
  KWeightingKernel,
  kWeightingLoop,
  type KWeightingLoop,
} from '../../src/analysis/kernels/k-weighting.ts';
import { seededRandom } from '../../src/selftest/signals.ts';
import { KERNEL_DIRS, kernelModuleText } from '../../bin/build-kernels.js';
import { convertS24Stereo } from '../../src/decode/kernels/s24-stereo.ts';
import {
  BALLISTICS_CHUNK_FRAMES,
  BallisticsKernel,
  type BallisticsPoles,
} from '../../src/analysis/kernels/ballistics.ts';
import { RECONSTRUCTION_KERNEL_FRAMES } from '../../src/analysis/kernels/reconstructed-peak.ts';
import { ReconstructedPeakMeter } from '../../src/analysis/reconstructed-peak.ts';
import { ReconstructedPeakMeter as PreKernelMeter } from '../helpers/reference-meters/reconstructed-peak-baseline.ts';
import { KERNEL_MEMORY } from '../../src/analysis/kernels/memory.ts';

/** The JavaScript loop the ballistics kernel replaced: one chunk's four sums, two frames a step. */
function scalarChunkSums(p: BallisticsPoles, x: Float32Array, from: number): number[] {
  let hf = 0,
    hs = 0,
    hv = 0,
    gv = 0;
  for (let j = from; j < from + BALLISTICS_CHUNK_FRAMES; j += 2) {
    const x0 = x[j],
      x1 = x[j + 1];
    const q0 = x0 * x0,
      q1 = x1 * x1;
    const r0 = Math.abs(x0),
      r1 = Math.abs(x1);
    hf = p.fast2 * hf + (p.fast * q0 + q1);
    hs = p.slow2 * hs + (p.slow * q0 + q1);
    const ar0 = p.vu * r0,
      q = ar0 + r1;
    gv = p.vu2 * gv + (p.twoVu2 * hv + (ar0 + q));
    hv = p.vu2 * hv + q;
  }
  return [hf, hs, hv, gv];
}
import { join } from 'node:path';

/** The scalar loop the kernel replaced (one channel per loop, adding into power in channel order). */
function scalarKWeighting(
  loop: KWeightingLoop,
  weights: number[],
  channels: Float32Array[],
  pieces: number[],
): Float64Array {
  const frames = channels[0].length;
  const power = new Float64Array(frames);
  const state = weights.map(() => ({ s1a: 0, s1b: 0, s2a: 0, s2b: 0 }));
  const { c1, c2, a1, a2, h1, ha1, ha2, b0Squared } = loop;
  let from = 0;
  for (let p = 0; from < frames; p++) {
    const to = Math.min(frames, from + pieces[p % pieces.length]);
    channels.forEach((x, c) => {
      const g = weights[c] * b0Squared;
      let { s1a, s1b, s2a, s2b } = state[c];
      for (let n = from; n < to; n++) {
        const xn = x[n],
          sa = s1a,
          ta = s2a;
        const y1 = xn + sa;
        s1a = c1 * xn + s1b - a1 * sa;
        s1b = c2 * xn - a2 * sa;
        const y2 = y1 + ta;
        s2a = h1 * y1 + s2b - ha1 * ta;
        s2b = y1 - ha2 * y2;
        power[n] += g * y2 * y2;
      }
      state[c] = { s1a, s1b, s2a, s2b };
    });
    from = to;
  }
  return power;
}

function kernelKWeighting(
  loop: KWeightingLoop,
  weights: number[],
  channels: Float32Array[],
  pieces: number[],
): Float64Array {
  const kernel = new KWeightingKernel(loop, weights, 144_000);
  const frames = channels[0].length;
  const power = new Float64Array(frames);
  let from = 0;
  for (let p = 0; from < frames; p++) {
    const length = Math.min(frames - from, pieces[p % pieces.length]);
    power.set(kernel.filter(channels, from, length), from);
    from += length;
  }
  return power;
}

describe('WebAssembly kernels', () => {
  it('are committed as `npm run kernels` writes them from their .wat sources', async () => {
    const sources = KERNEL_DIRS.flatMap((dir) =>
      readdirSync(dir)
        .filter((f) => f.endsWith('.wat'))
        .map((f) => join(dir, f)),
    );
    expect(sources.map((p) => p.split('/').slice(-3).join('/')).sort()).toEqual([
      'analysis/kernels/ballistics.wat',
      'analysis/kernels/envelope.wat',
      'analysis/kernels/k-weighting.wat',
      'analysis/kernels/pair-sums.wat',
      'analysis/kernels/reconstructed-peak.wat',
      'analysis/kernels/sums.wat',
      'analysis/kernels/true-peak.wat',
      'decode/kernels/s24-stereo.wat',
    ]);
    for (const wat of sources)
      expect(readFileSync(wat.replace(/\.wat$/, '.wasm.ts'), 'utf8')).toBe(await kernelModuleText(wat));
  });

  it("lay out their memory as the loaders' table says (the .wat comment names each region, the code addresses it)", () => {
    const dir = KERNEL_DIRS.find((d) => d.endsWith(join('analysis', 'kernels')))!;
    const wats = readdirSync(dir)
      .filter((f) => f.endsWith('.wat'))
      .map((f) => f.replace(/\.wat$/, ''));
    expect(wats.sort()).toEqual(Object.keys(KERNEL_MEMORY).sort());
    for (const [name, regions] of Object.entries(KERNEL_MEMORY)) {
      const lines = readFileSync(join(dir, `${name}.wat`), 'utf8').split('\n');
      const comment = lines.filter((l) => l.startsWith(';;'));
      const memoryAt = comment.findIndex((l) => l.includes('Memory (bytes'));
      // The comment's regions: NAME offset pairs from the Memory line up to the blank comment line after it.
      const end = comment.findIndex((l, i) => i > memoryAt && l.trim() === ';;');
      const commented = Object.fromEntries(
        [
          ...comment
            .slice(memoryAt, end < 0 ? undefined : end)
            .join(' ')
            .matchAll(/\b([A-Z][A-Z0-9_]*) +(\d+)\b/g),
        ].map(([, region, offset]) => [region, Number(offset)]),
      );
      expect(commented, name).toEqual(regions);
      const code = lines.filter((l) => !l.trimStart().startsWith(';;')).join('\n');
      for (const [region, offset] of Object.entries(regions)) {
        if (offset > 0) expect(code, `${name} ${region}`).toMatch(new RegExp(`(i32\\.const |offset=)${offset}\\b`));
      }
    }
  });

  it('24-bit stereo conversion equals the scalar formula for every sample (extremes, odd counts, several calls)', () => {
    const random = seededRandom(5);
    const frames = 2 * 16_384 + 7;
    const bytes = Uint8Array.from({ length: 6 * frames + 16 }, () => Math.floor(random() * 256));
    // Full-scale extremes and zero in the first frames: 0x7fffff, -0x800000, 0, -1.
    bytes.set([0xff, 0xff, 0x7f, 0x00, 0x00, 0x80, 0, 0, 0, 0xff, 0xff, 0xff], 0);
    const left = new Float32Array(frames + 3),
      right = new Float32Array(frames + 3);
    const done = convertS24Stereo(bytes, frames, left, right, 3);
    expect(done).toBe(frames - (frames % 4));
    const sample = (i: number) =>
      (((bytes[3 * i + 2] << 24) | (bytes[3 * i + 1] << 16) | (bytes[3 * i] << 8)) >> 8) / 8_388_608;
    for (let f = 0; f < done; f++) {
      if (left[3 + f] !== Math.fround(sample(2 * f)) || right[3 + f] !== Math.fround(sample(2 * f + 1)))
        throw new Error(`frame ${f} differs`);
    }
    expect([left[3], right[3], left[4], right[4]]).toEqual([8_388_607 / 8_388_608, -1, 0, -1 / 8_388_608]);
  });

  it('ballistics chunk sums equal the JavaScript loop bit for bit in both lanes (48 kHz poles, full scale, silence, noise)', () => {
    const poles = (fs: number): BallisticsPoles => {
      const [af, as, av] = [0.125 * fs, 1 * fs, (0.3 / 6.638352067993813) * fs].map((t) => Math.exp(-1 / t));
      return { fast: af, fast2: af * af, slow: as, slow2: as * as, vu: av, vu2: av * av, twoVu2: 2 * (av * av) };
    };
    const random = seededRandom(11);
    const chunks = 256;
    const a = Float32Array.from({ length: chunks * 64 }, (_, i) => (i < 64 ? 1 : i < 128 ? 0 : random() * 2 - 1));
    const b = Float32Array.from({ length: chunks * 64 }, (_, i) =>
      i < 64 ? -1 : Math.fround((random() * 2 - 1) * 1e-4),
    );
    for (const fs of [44_100, 48_000]) {
      const p = poles(fs);
      const kernel = new BallisticsKernel(p);
      kernel.laneA.set(a);
      kernel.laneB.set(b);
      kernel.run(chunks);
      for (let k = 0; k < chunks; k++) {
        const lanes = [0, 1].map((l) => [0, 2, 4, 6].map((q) => kernel.sums[8 * k + q + l]));
        expect(lanes[0]).toEqual(scalarChunkSums(p, a, 64 * k));
        expect(lanes[1]).toEqual(scalarChunkSums(p, b, 64 * k));
      }
    }
  });

  it('K-weighting equals the scalar loop bit for bit: 1, 2, 5 weighted channels (Table 3 weights), 44.1 and 48 kHz, odd pieces', () => {
    const random = seededRandom(21);
    for (const sampleRate of [44_100, 48_000]) {
      const loop = kWeightingLoop(shelfCoefficients(sampleRate), highpassCoefficients(sampleRate));
      // BS.1770-5 Table 3: 1.0 for front channels, 1.41 for the surrounds.
      for (const weights of [[1], [1, 1], [1, 1, 1, 1.41, 1.41]]) {
        const frames = 3 * KERNEL_FRAMES + 1234;
        const channels = weights.map((_, c) =>
          Float32Array.from(
            { length: frames },
            (_v, i) => ((i > 500 * c ? 2 * random() - 1 : 0) * (c + 1)) / weights.length,
          ),
        );
        channels[0][7] = 1;
        channels[0][8] = -1; // full-scale steps
        for (const pieces of [[KERNEL_FRAMES], [1, 4097, 333, KERNEL_FRAMES]]) {
          expect(Array.from(kernelKWeighting(loop, weights, channels, pieces))).toEqual(
            Array.from(scalarKWeighting(loop, weights, channels, pieces)),
          );
        }
      }
    }
  });

  it('K-weighting with no weighted channel (LFE only) gives zero power', () => {
    const loop = kWeightingLoop(shelfCoefficients(48_000), highpassCoefficients(48_000));
    const power = new KWeightingKernel(loop, [], 144_000).filter([], 0, 100);
    expect(power.length).toBe(100);
    expect(power.every((p) => p === 0)).toBe(true);
  });

  it("reconstructed peak: every frame's reading equals the JavaScript loop it replaced bit for bit (across kernel pieces, 3 channels, extremes)", () => {
    const random = seededRandom(31);
    const frames = 2 * RECONSTRUCTION_KERNEL_FRAMES + 777;
    const smooth = (scale: number) => {
      let y = 0;
      return Float32Array.from({ length: frames }, () => (y = 0.95 * y + scale * (random() - 0.5)));
    };
    const channels = [smooth(0.6), Float32Array.from({ length: frames }, () => random() * 2 - 1), smooth(1e-30)];
    channels[1].set([1, -1, 1, -1, 0, 1, 1, 1, -1], 5000); // full-scale steps
    channels[2].fill(0, 100, 3000); // digital silence inside a channel
    // A ceiling far below the signal and a negative merge window: each frame's reading is an event
    // of its own (its value the reading), and the bound prunes nothing.
    const info = { sampleRate: 44_100, channels: 3, channelLabels: ['L', 'R', 'C'] as ('L' | 'R' | 'C')[] };
    const options = { overCeilingDbtp: -900, overMergeSeconds: -1, maxEvents: 1e7 };
    for (const pieces of [[frames], [RECONSTRUCTION_KERNEL_FRAMES + 1, 5, 64]]) {
      const kernel = new ReconstructedPeakMeter(info, options);
      const loop = new PreKernelMeter(info, options);
      for (let from = 0, p = 0; from < frames; p++) {
        const to = Math.min(frames, from + pieces[p % pieces.length]);
        const block = { channelData: channels.map((x) => x.subarray(from, to)), frames: to - from };
        kernel.push(block);
        loop.push(block);
        from = to;
      }
      const [a, b] = [kernel.result(), loop.result()];
      expect(a.eventsTotal).toBeGreaterThan(2 * frames);
      expect({ ...a, prunedFrames: 0 }).toEqual({ ...b, prunedFrames: 0 });
    }
  });
});
