// The time-weighted levels in the analysis document (maxFastDbfs, maxSlowDbfs, maxVuDbfs per
// channel) equal the per-sample recurrences of test/helpers/reference-meters/level-reference.ts,
// on signals aimed at where a chunked or bound-skipping meter could go wrong: maxima rising in the
// last samples of a block or the stream, a full-scale sine, a crescendo, isolated clicks that set a
// new maximum by one sample on and off a 64-frame grid, clicks over a tone, and tiny values
// decaying into silence. Three channels (the kernel takes channels in pairs), one thread with odd
// decode blocks and two threads.
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { openAudioFile } from '../../src/decode/index.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { seededRandom } from '../../src/selftest/signals.ts';
import { referenceTimeWeighted } from '../helpers/reference-meters/level-reference.ts';

const RATE = 48_000;
const CHANNELS = 3;
/** dB readings from the same recurrence in another order of operations: rounding far below this. */
const TOLERANCE_DB = 1e-9;

function channelsOf(frames: number, sample: (c: number, i: number) => number): Float32Array[] {
  return Array.from({ length: CHANNELS }, (_, c) => Float32Array.from({ length: frames }, (_, i) => sample(c, i)));
}

const random = seededRandom(21);
const noise = () => 2 * random() - 1;
const BLOCK = 65_536;
const signals: Record<string, () => Float32Array[]> = {
  // Quiet noise, then bursts ending on block boundaries and at the very end, each louder.
  lateRise: () =>
    channelsOf(2 * BLOCK + 1_234, (c, i) => {
      if (i >= BLOCK - 300 && i < BLOCK) return 0.3 * noise();
      if (i >= 2 * BLOCK - 40 - c && i < 2 * BLOCK) return 0.6 * noise();
      if (i >= 2 * BLOCK + 1_234 - 25) return (0.9 + 0.01 * c) * noise();
      return 0.01 * noise();
    }),
  fullScaleSine: () => channelsOf(2 * RATE, (c, i) => Math.sin((2 * Math.PI * (997 + 10 * c) * i) / RATE)),
  crescendo: () => channelsOf(2 * RATE, (c, i) => (i / (2 * RATE)) ** (1 + c) * noise()),
  // Single-sample clicks, 0.3 % louder each, on (channel 0) and off the 64-frame grid.
  steppedClicks: () => channelsOf(5 * RATE, (c, i) => (i % RATE === 7 * c ? 0.5 * 1.003 ** Math.floor(i / RATE) : 0)),
  // A quiet tone sets the Slow and VU maxima; later clicks raise only the Fast one.
  clicksOverTone: () =>
    channelsOf(8 * RATE, (c, i) =>
      i < 3 * RATE
        ? 0.0125 * Math.sin((2 * Math.PI * 997 * i) / RATE)
        : i > 4 * RATE && i % RATE === 7 * c
          ? 0.9 * 1.001 ** Math.floor(i / RATE)
          : 0,
    ),
  tinyThenSilence: () => channelsOf(1_200_000, (c, i) => (i < 1_000 + 100 * c ? 1e-38 * noise() : 0)),
};

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'earmark-ballistics-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function decodedSamples(path: string): Promise<Float32Array[]> {
  const decoded = await openAudioFile(path);
  const out = Array.from({ length: decoded.format.channels }, (): number[] => []);
  for await (const block of decoded.blocks)
    block.channelData.forEach((x, c) => {
      for (let i = 0; i < block.frames; i++) out[c].push(x[i]);
    });
  return out.map((x) => Float32Array.from(x));
}

describe('time-weighted levels in the document equal the per-sample reference', () => {
  for (const [name, make] of Object.entries(signals)) {
    it(name, async () => {
      const path = join(dir, `${name}.wav`);
      await writeWavFile(path, { sampleRate: RATE, channels: CHANNELS, bitsPerSample: 32, float: true }, [make()]);
      const expected = (await decodedSamples(path)).map((x) => referenceTimeWeighted(x, RATE));
      for (const options of [{ threads: 1, decode: { maxBlockFrames: 4_097 } }, { threads: 2 }]) {
        const doc = await analyzeFile(path, options);
        doc.channels.forEach((channel, c) => {
          for (const key of ['maxFastDbfs', 'maxSlowDbfs', 'maxVuDbfs'] as const) {
            const [actual, want] = [channel[key], expected[c][key]];
            if (actual === null || want === null) expect(actual, `${key} ${c}`).toBe(want);
            else
              expect(Math.abs(actual - want), `${key} ${c}: ${actual} against ${want}`).toBeLessThanOrEqual(
                TOLERANCE_DB,
              );
          }
        });
      }
    }, 60_000);
  }
});
