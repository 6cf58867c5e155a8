// The fold-down readings are a whole meter on one thread: split across threads they are the serial ones.
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { writeWavFile } from '../../src/encode/wav.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';

describe('downmix readings across threads', () => {
  it('5.1: the same readings from one thread and from two', async () => {
    const path = join(mkdtempSync(join(tmpdir(), 'earmark-downmix-threads-')), 'programme.wav');
    const blocks = (function* () {
      for (const b of programmeBlocks({ sampleRate: 48000, channels: 6, seconds: 8, seed: 11 }))
        yield b.channelData as Float32Array[];
    })();
    await writeWavFile(path, { sampleRate: 48000, channels: 6, bitsPerSample: 24, float: false }, blocks);
    const analysis = { downmix: { enabled: true, channelLoudness: true } };
    const serial = await analyzeFile(path, { hash: false, analysis });
    const split = await analyzeFile(path, { hash: false, analysis, threads: 2 });
    expect(serial.downmix.loRo?.integratedLufs).toEqual(expect.any(Number));
    expect(split.downmix).toEqual(serial.downmix);
  });
});
