// Decoding reads synchronously, so the analysis loop must give the event loop a turn per block:
// otherwise an abort, an IPC disconnect (the sandboxed worker's parent dying) or a progress
// message could not run until the whole file was done.
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';

const path = join(mkdtempSync(join(tmpdir(), 'earmark-turns-')), 'programme.wav');
beforeAll(async () => {
  const blocks = (function* () {
    for (const b of programmeBlocks({ sampleRate: 8000, channels: 1, seconds: 20, seed: 4 }))
      yield b.channelData as Float32Array[];
  })();
  await writeWavFile(path, { sampleRate: 8000, channels: 1, bitsPerSample: 16, float: false }, blocks);
});

describe('analyzeFile and the event loop', () => {
  it('lets a timer set during the analysis run between blocks, so an abort from it stops the analysis', async () => {
    const controller = new AbortController();
    let scheduled = false;
    // Scheduled from inside the block loop (the first progress report), not before it starts.
    const onProgress = () => {
      if (!scheduled) {
        scheduled = true;
        setImmediate(() => controller.abort());
      }
    };
    await expect(
      analyzeFile(path, { hash: false, signal: controller.signal, onProgress, decode: { maxBlockFrames: 4000 } }),
    ).rejects.toMatchObject({ code: 'cancelled', message: 'analysis was cancelled' });
    expect(scheduled).toBe(true);
  });

  it('runs timers while an analysis that is not aborted goes on (40 blocks)', async () => {
    let ticks = 0;
    const ticksAtProgress: number[] = [];
    const timer = setInterval(() => {
      ticks++;
    }, 0);
    try {
      const document = await analyzeFile(path, {
        hash: false,
        onProgress: () => ticksAtProgress.push(ticks),
        decode: { maxBlockFrames: 4000 },
      });
      expect(document.format.framesDecoded).toBe(160_000);
    } finally {
      clearInterval(timer);
    }
    // Progress is reported from inside the block loop: the timer must have run between reports.
    expect(ticksAtProgress.length).toBeGreaterThan(2);
    expect(ticksAtProgress[ticksAtProgress.length - 1]).toBeGreaterThan(ticksAtProgress[0]);
  });
});
