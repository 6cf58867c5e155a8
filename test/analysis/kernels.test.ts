// The WebAssembly kernels: the committed .wasm.ts files are what `npm run kernels` makes from the
// .wat sources, and each kernel computes exactly what the scalar JavaScript loop it replaced did.
import { readdirSync, readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { highpassCoefficients, shelfCoefficients } from '../../src/analysis/k-weighting.ts';
import { KERNEL_FRAMES, KWeightingKernel, kWeightingLoop, type KWeightingLoop } from '../../src/analysis/kernels/k-weighting.ts';
import { seededRandom } from '../../src/selftest/signals.ts';
import { kernelModuleText } from '../../bin/build-kernels.js';

const KERNELS = new URL('../../src/analysis/kernels/', import.meta.url);

/** The scalar loop the kernel replaced (one channel per loop, adding into power in channel order). */
function scalarKWeighting(loop: KWeightingLoop, weights: number[], channels: Float32Array[], pieces: number[]): Float64Array {
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
        const xn = x[n], sa = s1a, ta = s2a;
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

function kernelKWeighting(loop: KWeightingLoop, weights: number[], channels: Float32Array[], pieces: number[]): Float64Array {
  const kernel = new KWeightingKernel(loop, weights);
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
    const sources = readdirSync(KERNELS).filter((f) => f.endsWith('.wat'));
    expect(sources.sort()).toEqual(['envelope.wat', 'k-weighting.wat', 'sums.wat']);
    for (const wat of sources) {
      expect(readFileSync(new URL(wat.replace(/\.wat$/, '.wasm.ts'), KERNELS), 'utf8')).toBe(await kernelModuleText(wat));
    }
  });

  it('K-weighting equals the scalar loop bit for bit: 1, 2, 5 weighted channels (Table 3 weights), 44.1 and 48 kHz, odd pieces', () => {
    const random = seededRandom(21);
    for (const sampleRate of [44_100, 48_000]) {
      const loop = kWeightingLoop(shelfCoefficients(sampleRate), highpassCoefficients(sampleRate));
      // BS.1770-5 Table 3: 1.0 for front channels, 1.41 for the surrounds.
      for (const weights of [[1], [1, 1], [1, 1, 1, 1.41, 1.41]]) {
        const frames = 3 * KERNEL_FRAMES + 1234;
        const channels = weights.map((_, c) => Float32Array.from({ length: frames }, (_v, i) => (i > 500 * c ? 2 * random() - 1 : 0) * (c + 1) / weights.length));
        channels[0][7] = 1; channels[0][8] = -1; // full-scale steps
        for (const pieces of [[KERNEL_FRAMES], [1, 4097, 333, KERNEL_FRAMES]]) {
          expect(Array.from(kernelKWeighting(loop, weights, channels, pieces))).toEqual(Array.from(scalarKWeighting(loop, weights, channels, pieces)));
        }
      }
    }
  });

  it('K-weighting with no weighted channel (LFE only) gives zero power', () => {
    const loop = kWeightingLoop(shelfCoefficients(48_000), highpassCoefficients(48_000));
    const power = new KWeightingKernel(loop, []).filter([], 0, 100);
    expect(power.length).toBe(100);
    expect(power.every((p) => p === 0)).toBe(true);
  });
});
