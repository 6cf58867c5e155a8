// The shared block envelope equals a plain max/min of |x| per 32-frame chunk.
import { describe, expect, it } from 'vitest';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from '../../src/analysis/envelope.ts';
import { seededRandom } from '../../src/selftest/signals.ts';

function plain(x: Float32Array): { max: number[]; min: number[] } {
  const max: number[] = [],
    min: number[] = [];
  for (let s = 0; s < x.length; s += ENVELOPE_CHUNK_FRAMES) {
    const chunk = Array.from(x.subarray(s, s + ENVELOPE_CHUNK_FRAMES), Math.abs);
    max.push(Math.max(...chunk));
    min.push(Math.min(...chunk));
  }
  return { max, min };
}

describe('EnvelopeBuilder', () => {
  it('gives each chunk the largest and smallest |x| exactly, with full scale, -0, denormals and a short last chunk', () => {
    const random = seededRandom(3);
    const frames = 32 * 40 + 7;
    for (const long of [false, true]) check(long ? 2 * 16_384 + 32 * 3 + 7 : frames, random);
  });

  function check(frames: number, random: () => number): void {
    const x = Float32Array.from({ length: frames }, () => (random() - 0.5) * 2);
    x[5] = -1;
    x[40] = 1;
    x[41] = -0;
    x[70] = 1e-40;
    x[frames - 1] = -0.75;
    x[100] = 0;
    const y = Float32Array.from(x, (v) => -v * 0.5);
    const envelope = new EnvelopeBuilder().build({ channelData: [x, y], frames });
    expect(envelope.chunks).toBe(Math.ceil(frames / 32));
    for (const [c, signal] of [x, y].entries()) {
      const expected = plain(signal);
      expect(Array.from(envelope.maxAbs[c].subarray(0, envelope.chunks))).toEqual(expected.max);
      expect(Array.from(envelope.minAbs[c].subarray(0, envelope.chunks))).toEqual(expected.min);
      expect(envelope.blockMaxAbs[c]).toBe(Math.max(...expected.max));
    }
    expect(envelope.maxAbs[0][0]).toBe(1);
    expect(envelope.minAbs[0][1]).toBe(0);
    expect(envelope.minAbs[0][2]).toBe(Math.fround(1e-40)); // a Float32 denormal keeps its order as bits
  }

  it('reuses its buffers across blocks without leaking a bigger block into a smaller one', () => {
    const builder = new EnvelopeBuilder();
    builder.build({ channelData: [new Float32Array(640).fill(0.9)], frames: 640 });
    const small = builder.build({ channelData: [new Float32Array(33).fill(0.1)], frames: 33 });
    expect(small.chunks).toBe(2);
    expect(small.blockMaxAbs[0]).toBeCloseTo(0.1, 7);
  });
});
