// Compressed decoders write into the arrays a consumer offers (DecodeOptions.blockArrays), as the
// PCM streamer does, and ask for them only after the previous block was taken: one reused set
// gives the same samples as fresh arrays per block. The analysis offers such a set on one thread.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openAudioFile } from '../../src/decode/index.ts';
import type { DecodeOptions } from '../../src/decode/types.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');
let dir = '';
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'earmark-offered-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Every block copied out as it arrives, and whether each was written into the offered arrays. */
async function decodeCopies(path: string, options: DecodeOptions, offered: Float32Array[] | null) {
  const decoded = await openAudioFile(path, options);
  const copies: Float32Array[][] = [];
  const inOffered: boolean[] = [];
  for await (const block of decoded.blocks) {
    copies.push(block.channelData.map((c) => Float32Array.from(c)));
    inOffered.push(offered !== null && block.channelData[0].buffer === offered[0].buffer);
  }
  return { copies, inOffered };
}

describe.skipIf(!hasFfmpeg)('offered block arrays, compressed input', () => {
  for (const [name, codec] of [
    ['tone.flac', ['-c:a', 'flac']],
    ['tone.mp3', ['-c:a', 'libmp3lame', '-b:a', '192k']],
  ] as const) {
    it(`${name}: one reused set gives the samples fresh arrays give`, async () => {
      const path = join(dir, name);
      const source = 'aevalsrc=0.5*sin(2*PI*1000*t)|0.3*sin(2*PI*440*t):s=44100:d=3';
      execFileSync('ffmpeg', ['-v', 'error', '-y', '-f', 'lavfi', '-i', source, ...codec, path]);
      const maxBlockFrames = 4096;
      const fresh = await decodeCopies(path, { maxBlockFrames }, null);
      const offered = [new Float32Array(maxBlockFrames), new Float32Array(maxBlockFrames)];
      const reused = await decodeCopies(path, { maxBlockFrames, blockArrays: () => offered }, offered);
      expect(fresh.copies.length).toBeGreaterThan(10);
      expect(reused.copies).toEqual(fresh.copies);
      expect(reused.inOffered.every(Boolean)).toBe(true);
      expect(fresh.inOffered.some(Boolean)).toBe(false);
    });
  }

  it('arrays of the wrong shape are not used', async () => {
    const path = join(dir, 'tone.flac');
    const small = [new Float32Array(16), new Float32Array(16)];
    const result = await decodeCopies(path, { maxBlockFrames: 4096, blockArrays: () => small }, small);
    expect(result.inOffered.some(Boolean)).toBe(false);
  });
});
