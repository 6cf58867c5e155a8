// Whole-signal test material for the optimised-vs-reference checks, and a block cutter.
import type { PcmBlock } from '../../src/analysis/audio.ts';
import { programmeBlocks, seededRandom } from '../../src/selftest/signals.ts';

export const SAMPLE_RATE = 48_000;

function programme(channels: number, seconds: number, levelDbfs: number, seed: number): Float32Array[] {
  const out = Array.from({ length: channels }, () => new Float32Array(Math.round(seconds * SAMPLE_RATE)));
  let at = 0;
  for (const block of programmeBlocks({ sampleRate: SAMPLE_RATE, channels, seconds, seed, levelDbfs })) {
    block.channelData.forEach((x, c) => out[c].set(x, at));
    at += block.frames;
  }
  return out;
}

/** Four kinds of material the meters must read identically however they are optimised. */
export function testSignals(channels: number, seconds = 8): Record<string, Float32Array[]> {
  const random = seededRandom(7);
  // Brick-wall limited master: programme driven hard into a soft ceiling just below full scale.
  const loud = programme(channels, seconds, -6, 11).map((x) => x.map((v) => 0.97 * Math.tanh(3 * v)));
  // Clipped: driven into hard clipping at exactly full scale.
  const clipped = programme(channels, seconds, -4, 12).map((x) => x.map((v) => Math.max(-1, Math.min(1, v))));
  // Gaps of digital silence and of low noise (below and above -60 dBFS), some in one channel only.
  const gaps = programme(channels, seconds, -24, 13).map((x, c) =>
    x.map((v, i) => {
      const t = i / SAMPLE_RATE;
      if (t < 0.5 || (t > 2 && t < 4.5)) return 0;
      if (t > 5 && t < 5.7 && c === 0) return 1e-4 * (random() - 0.5);
      if (t > 6 && t < 6.003) return 0.002 * (random() - 0.5);
      return v;
    }),
  );
  return { programme: programme(channels, seconds, -20, 10), loud, clipped, gaps };
}

/** Cuts planar channels into blocks of the given sizes, cycling through them. */
export function* cut(channels: Float32Array[], sizes: number[]): Generator<PcmBlock> {
  const total = channels[0].length;
  for (let start = 0, k = 0; start < total; k++) {
    const end = Math.min(total, start + sizes[k % sizes.length]);
    yield { channelData: channels.map((x) => x.subarray(start, end)), frames: end - start };
    start = end;
  }
}

/** Odd block cuts (single frames, primes, a typical decoder block). */
export const BLOCK_CUTS: number[][] = [[65_536], [4_097, 1, 7, 19_999], [1_000_003]];

/** Deep comparison: numbers within `tolerance` (relative above 1, absolute below), the rest equal. */
export function expectClose(actual: unknown, expected: unknown, tolerance = 1e-9, path = '$'): void {
  if (typeof expected === 'number' && typeof actual === 'number') {
    if (Object.is(actual, expected)) return;
    const scale = Math.max(1, Math.abs(expected));
    if (!(Math.abs(actual - expected) <= tolerance * scale))
      throw new Error(`${path}: ${actual} differs from reference ${expected}`);
    return;
  }
  if (expected !== null && typeof expected === 'object') {
    if (actual === null || typeof actual !== 'object') throw new Error(`${path}: ${String(actual)} is not an object`);
    const keys = new Set([...Object.keys(expected), ...Object.keys(actual)]);
    for (const key of keys)
      expectClose(
        (actual as Record<string, unknown>)[key],
        (expected as Record<string, unknown>)[key],
        tolerance,
        `${path}.${key}`,
      );
    return;
  }
  if (actual !== expected) throw new Error(`${path}: ${String(actual)} differs from reference ${String(expected)}`);
}
