// An error raised inside a meter keeps its catalogue code whichever thread runs the meter.
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { testSignals } from '../helpers/test-signals.ts';

let dir = '';
let file = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'earmark-thread-errors-'));
  file = join(dir, 'tone.wav');
  await writeWavFile(file, { sampleRate: 48_000, channels: 2, bitsPerSample: 24, float: false }, [
    testSignals(2, 2).clipped,
  ]);
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('meter errors across analysis threads', () => {
  const failure = (threads: number) =>
    analyzeFile(file, { threads, analysis: { channelRelations: { windowSeconds: 0 } } }).then(
      () => null,
      (e: unknown) => e,
    );

  it.each([1, 2, 3])(
    'a bad channelRelations.windowSeconds is invalid_argument on %i thread(s), in the same words',
    async (threads) => {
      const serial = await failure(1);
      expect(serial).toMatchObject({ name: 'EarmarkError', code: 'invalid_argument' });
      expect(await failure(threads)).toMatchObject({
        name: 'EarmarkError',
        code: 'invalid_argument',
        message: (serial as Error).message,
      });
    },
    60_000,
  );
});
