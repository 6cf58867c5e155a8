// Generated stems and their mix, written block by block with the project's WAV writer. Each stem
// is a stereo sine (the two channels a quarter period apart); the mix is the sum of the stems as
// stored, so with float or exact integer samples it nulls against them.

import { join } from 'node:path';
import { writeWavFile } from '../../src/encode/wav.ts';
import { seededRandom } from '../../src/selftest/signals.ts';

export interface StemSpec {
  frequencyHz: number;
  amplitude: number;
}

export const STEMS: StemSpec[] = [
  { frequencyHz: 220, amplitude: 0.2 },
  { frequencyHz: 1000, amplitude: 0.1 },
  { frequencyHz: 3000, amplitude: 0.05 },
];

export interface StemSetOptions {
  dir: string;
  seconds: number;
  sampleRate?: number;
  /** 32 float (default), or 16/24-bit integers. */
  bitsPerSample?: 16 | 24 | 32;
  /** 16-bit only: TPDF dither of +/-1 LSB on every file (seeded). */
  dither?: boolean;
  /** Zero these frames [start, end) of one stem (the mix keeps them). */
  mute?: { stem: number; startFrame: number; endFrame: number };
  /** Frames to drop from the end of one stem. */
  shorten?: { stem: number; frames: number };
  prefix?: string;
}

const BLOCK_FRAMES = 4096;

/** Writes stem-1.wav ... and mix.wav; returns their paths. */
export async function writeStemSet(o: StemSetOptions): Promise<{ stems: string[]; mix: string }> {
  const rate = o.sampleRate ?? 48_000;
  const bits = o.bitsPerSample ?? 32;
  const float = bits === 32;
  const scale = 2 ** (bits - 1);
  const frames = Math.round(o.seconds * rate);
  const random = seededRandom(19);
  // The value a file stores for x: float32, or the integer step (dithered or not).
  const stored = (x: number) => {
    if (float) return Math.fround(x);
    const dither = o.dither ? random() - random() : 0;
    return Math.max(-scale, Math.min(scale - 1, Math.round(x * scale + dither))) / scale;
  };
  const sample = (s: number, c: number, n: number) =>
    STEMS[s].amplitude * Math.sin((2 * Math.PI * STEMS[s].frequencyHz * n) / rate + (c * Math.PI) / 2);
  const prefix = o.prefix ?? '';
  const stems: string[] = [];
  const mix = join(o.dir, `${prefix}mix.wav`);
  // One pass per file keeps the writer streaming; the mix sums the stems as they are stored (undithered for 16-bit dither, so its own dither is independent).
  for (let s = 0; s < STEMS.length; s++) {
    const random16 = seededRandom(100 + s);
    const storedStem = (x: number) =>
      float || !o.dither
        ? stored(x)
        : Math.max(-scale, Math.min(scale - 1, Math.round(x * scale + random16() - random16()))) / scale;
    const length = frames - (o.shorten?.stem === s ? o.shorten.frames : 0);
    const path = join(o.dir, `${prefix}stem-${s + 1}.wav`);
    await writeWavFile(
      path,
      { sampleRate: rate, channels: 2, bitsPerSample: bits, float },
      blocksOf(length, (c, n) => {
        const muted = o.mute?.stem === s && n >= o.mute.startFrame && n < o.mute.endFrame;
        return muted ? 0 : storedStem(sample(s, c, n));
      }),
    );
    stems.push(path);
  }
  const undithered = (x: number) => (float ? Math.fround(x) : Math.round(x * scale) / scale);
  await writeWavFile(
    mix,
    { sampleRate: rate, channels: 2, bitsPerSample: bits, float },
    blocksOf(frames, (c, n) => {
      let sum = 0;
      for (let s = 0; s < STEMS.length; s++) sum += o.dither ? sample(s, c, n) : undithered(sample(s, c, n));
      return stored(sum);
    }),
  );
  return { stems, mix };
}

function* blocksOf(frames: number, value: (channel: number, frame: number) => number): Generator<Float64Array[]> {
  for (let start = 0; start < frames; start += BLOCK_FRAMES) {
    const n = Math.min(BLOCK_FRAMES, frames - start);
    const block = [new Float64Array(n), new Float64Array(n)];
    for (let c = 0; c < 2; c++) for (let i = 0; i < n; i++) block[c][i] = value(c, start + i);
    yield block;
  }
}
