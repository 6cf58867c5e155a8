// The FLAC output requantizer must give exactly Math.round(x * (2^(b-1) - 1)) / 2^(b-1) for every
// float32 input, signed zeros, halves and non-finite values included: it replaces that
// expression on the decode path and no sample may change.
import { describe, expect, it } from 'vitest';
import { requantizeInto } from '../../src/decode/compressed-output.ts';

function reference(from: Float32Array, scale: number): Float32Array {
  return from.map((x) => Math.round(x * (scale - 1)) / scale);
}

function sameBits(a: Float32Array, b: Float32Array): boolean {
  const x = new Uint32Array(a.buffer, a.byteOffset, a.length);
  const y = new Uint32Array(b.buffer, b.byteOffset, b.length);
  return x.length === y.length && x.every((v, i) => v === y[i]);
}

/** A deterministic spread of float32 values: decoded integers, values near halves, edge cases. */
function inputs(scale: number): Float32Array {
  const values: number[] = [0, -0, 0.5, -0.5, 1, -1, 0.49999997, -0.49999997, NaN, Infinity, -Infinity];
  values.push(2 ** 52 + 1, -(2 ** 52 + 1), 2 ** 60, 3.4e38, -3.4e38, 1e-45, -1e-45, 1e-40, -1e-40);
  let seed = 12345;
  const next = (): number => {
    seed = (Math.imul(seed, 1103515245) + 12345) >>> 0;
    return seed / 2 ** 32;
  };
  for (let i = 0; i < 20000; i++) {
    const k = Math.floor(next() * 2 * scale) - scale;
    values.push(k / (scale - 1)); // what the decoder gives for integer sample k
    values.push((k + 0.5) / (scale - 1)); // halves after scaling
    values.push((k + 0.5) / (scale - 1) + (next() - 0.5) * 1e-6);
    values.push(k / (scale - 1) + (next() - 0.5) * 1e-3);
    values.push((next() - 0.5) * 8);
    values.push((next() - 0.5) * 2 ** (1 + next() * 60));
    values.push((-0.4 / (scale - 1)) * next()); // rounds to -0
  }
  return Float32Array.from(values);
}

describe('requantizeInto', () => {
  for (const bits of [8, 16, 20, 24, 32]) {
    it(`matches Math.round bit for bit at ${bits} bits`, () => {
      const scale = 2 ** (bits - 1);
      const from = inputs(scale);
      const to = new Float32Array(from.length + 3);
      requantizeInto(to, 3, from, scale);
      expect(sameBits(to.subarray(3), reference(from, scale))).toBe(true);
    });
  }

  it('keeps the sign of a zero result', () => {
    const to = new Float32Array(2);
    requantizeInto(to, 0, Float32Array.of(-1e-9, 1e-9), 2 ** 15);
    expect(Object.is(to[0], -0)).toBe(true);
    expect(Object.is(to[1], 0)).toBe(true);
  });
});
