import { mkdtempSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openAudioFile } from '../../src/decode/index.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { cutExcerpt } from '../../src/engine/excerpt.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-excerpt-'));

/** A ramp: sample n of channel c holds ((n mod 1000) / 1000) * (c ? -0.5 : 0.5), so positions are checkable. */
async function rampFile(seconds: number, sampleRate: number): Promise<string> {
  const path = join(dir, `ramp-${seconds}-${sampleRate}.wav`);
  const frames = seconds * sampleRate;
  const blocks = (function* () {
    for (let start = 0; start < frames; start += 10_000) {
      const n = Math.min(10_000, frames - start);
      const left = Float32Array.from({ length: n }, (_, i) => (((start + i) % 1000) / 1000) * 0.5);
      yield [left, left.map((v) => -v)];
    }
  })();
  await writeWavFile(path, { sampleRate, channels: 2, bitsPerSample: 24, float: false }, blocks);
  return path;
}

describe('cutExcerpt', () => {
  it('returns a playable WAV of exactly the requested span, sample-aligned', async () => {
    const path = await rampFile(20, 48000);
    const excerpt = await cutExcerpt(path, 3.25, 5.75);
    expect(excerpt.startSeconds).toBe(3.25);
    expect(excerpt.endSeconds).toBe(5.75);
    const out = join(dir, 'excerpt.wav');
    await writeFile(out, excerpt.wav);
    const decoded = await openAudioFile(out);
    expect(decoded.format).toMatchObject({
      container: 'wav',
      sampleRate: 48000,
      channels: 2,
      bitsPerSample: 24,
      frames: 2.5 * 48000,
    });
    const firstFrames: number[][] = [];
    for await (const block of decoded.blocks) {
      if (firstFrames.length === 0)
        firstFrames.push([block.channelData[0][0], block.channelData[0][1], block.channelData[1][1]]);
    }
    // Frame 3.25 * 48000 = 156000 -> 156000 mod 1000 = 0 -> value 0; frame 156001 -> 0.0005 (right: -0.0005).
    expect(firstFrames[0][0]).toBeCloseTo(0, 6);
    expect(firstFrames[0][1]).toBeCloseTo(0.0005, 6);
    expect(firstFrames[0][2]).toBeCloseTo(-0.0005, 6);
  });

  it('clamps at the end of the file and rejects bad spans with a typed error', async () => {
    const path = await rampFile(2, 44100);
    const tail = await cutExcerpt(path, 1.5, 4);
    expect(tail.endSeconds).toBe(2);
    await expect(cutExcerpt(path, 3, 4)).rejects.toMatchObject({ code: 'invalid_argument' });
    await expect(cutExcerpt(path, 1, 0.5)).rejects.toMatchObject({ code: 'invalid_argument' });
    await expect(cutExcerpt(path, 0, 60)).rejects.toMatchObject({
      code: 'invalid_argument',
      details: { field: 'endSeconds' },
    });
    await expect(cutExcerpt(path, Number.NaN, 1)).rejects.toMatchObject({ code: 'invalid_argument' });
  });
});
