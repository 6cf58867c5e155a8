// The unrolled LPC loops (src/decode/flac/lpc.ts) against the BigInt definition
// (test/helpers/flac-lpc-reference.ts, RFC 9639 section 9.2.6), for every order 1 to 32, both
// arithmetics, coefficient precisions up to 15 bits and samples up to 32 bits.
import { describe, expect, it } from 'vitest';
import { crc16, crc16Bytewise } from '../../src/decode/flac/crc.ts';
import { lpcFloat64, lpcInt32, lpcLoop } from '../../src/decode/flac/lpc.ts';
import { lpcResiduals, lpcRestore } from '../helpers/flac-lpc-reference.ts';

/** Deterministic pseudo-random integers in [-2^(bits-1), 2^(bits-1)). */
function randomInts(count: number, bits: number, seed: number): number[] {
  let s = seed >>> 0;
  return Array.from({ length: count }, () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    const u = s / 2 ** 32;
    return Math.floor(u * 2 ** bits) - 2 ** (bits - 1);
  });
}

describe('FLAC CRC-16', () => {
  it('four bytes at a time equals one byte at a time, at every length and offset', () => {
    const b = Uint8Array.from(randomInts(300, 8, 5), (v) => v & 0xff);
    for (let from = 0; from < 5; from++)
      for (let to = from; to <= b.length; to += 7) expect(crc16(b, from, to)).toBe(crc16Bytewise(b, from, to));
  });

  it('of a message followed by its CRC is 0 (RFC 9639 section 9.3)', () => {
    const b = Uint8Array.from(randomInts(100, 8, 6), (v) => v & 0xff);
    const c = crc16Bytewise(b, 0, 98);
    b[98] = c >> 8;
    b[99] = c & 0xff;
    expect(crc16(b, 0, 100)).toBe(0);
  });
});

describe('FLAC LPC loops', () => {
  it('the BigInt reference restores what it predicted', () => {
    const samples = randomInts(100, 16, 1);
    const coefs = randomInts(8, 12, 2);
    expect(lpcRestore(lpcResiduals(samples, coefs, 9), coefs, 9)).toEqual(samples);
  });

  for (const [sampleBits, precision] of [
    [16, 12],
    [17, 15],
    [24, 15],
    [25, 15],
    [32, 15],
    [8, 5],
  ] as const) {
    it(`orders 1 to 32, ${sampleBits}-bit samples, ${precision}-bit coefficients`, () => {
      let checked = 0;
      for (let order = 1; order <= 32; order++) {
        const n = 300;
        // Smooth samples (a random walk) so residuals stay small, as a valid stream's do.
        const walk = randomInts(n, Math.min(sampleBits, 20) - 4, order * 7);
        const samples: number[] = [];
        let v = 0;
        const limit = 2 ** (sampleBits - 1);
        for (const step of walk) {
          v = Math.max(-limit, Math.min(limit - 1, v + step));
          samples.push(v);
        }
        // A second-order predictor (2, -1) scaled by 2^shift, every tap perturbed: a predictor an
        // encoder could send, so the residuals of a smooth signal stay within 32 bits.
        const shift = Math.min(precision - 3, (order * 3 + sampleBits) % 16);
        const noise = randomInts(order, Math.max(1, shift - 2), order * 13 + sampleBits);
        const coefs = noise.map(
          (e, j) => e + (j === 0 ? (order === 1 ? 1 : 2) * 2 ** shift : j === 1 ? -(2 ** shift) : 0),
        );
        const residuals = lpcResiduals(samples, coefs, shift);
        if (residuals.some((r) => Math.abs(r) >= 2 ** 31)) continue; // not a valid stream
        const expected = lpcRestore(residuals, coefs, shift);
        const sumAbs = coefs.reduce((s, c) => s + Math.abs(c), 0);
        const int32 = sumAbs * 2 ** (sampleBits - 1) < 2 ** 31;
        const loops = [lpcLoop(order, false), lpcLoop(order, int32), { loop: lpcFloat64, taps: order }];
        if (int32) loops.push({ loop: lpcInt32, taps: order });
        for (const { loop, taps } of loops) {
          const c = new Int32Array(32);
          c.set(coefs);
          c.fill(0, order, taps);
          const x = Int32Array.from(residuals);
          loop(x, n, c, order, shift);
          expect(Array.from(x)).toEqual(expected);
        }
        checked++;
      }
      expect(checked).toBeGreaterThanOrEqual(24);
    });
  }
});
