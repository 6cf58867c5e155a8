// M4A with its index (moov) after the audio: fed to the decoder moov first, with its chunk
// offsets moved, and streamed; the same samples as the file rewritten with the index first
// (ffmpeg -movflags +faststart, Debian /usr/bin/ffmpeg). A patched mdhd duration is refused before decoding.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openAudioFileAs } from '../../src/decode/index.ts';
import { probeMp4 } from '../../src/decode/compressed-mp4.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');
let dir = '';

async function digest(path: string): Promise<{ frames: number; sha1: string; warnings: string[] }> {
  const d = await openAudioFileAs(path, 'm4a');
  const h = createHash('sha1');
  for await (const b of d.blocks)
    for (const c of b.channelData) h.update(new Uint8Array(c.buffer, c.byteOffset, b.frames * 4));
  return { frames: d.framesDecoded, sha1: h.digest('hex'), warnings: d.warnings.map((w) => w.code) };
}

describe.skipIf(!hasFfmpeg)('M4A with the index at the end', () => {
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'earmark-m4a-last-'));
  });
  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('decodes to the same samples as its index-first copy', async () => {
    const last = join(dir, 'last.m4a');
    const first = join(dir, 'first.m4a');
    execFileSync('ffmpeg', [
      '-v',
      'error',
      '-y',
      '-f',
      'lavfi',
      '-i',
      'sine=f=997:r=48000',
      '-t',
      '20',
      '-ac',
      '2',
      '-c:a',
      'aac',
      last,
    ]);
    execFileSync('ffmpeg', ['-v', 'error', '-y', '-i', last, '-c', 'copy', '-movflags', '+faststart', first]);
    const p = await probeMp4(last, readFileSync(last).length);
    expect(p.moovFirst).toBe(false);
    expect((await probeMp4(first, readFileSync(first).length)).moovFirst).toBe(true);
    const a = await digest(last);
    expect(a.frames).toBeGreaterThan(19 * 48000);
    expect(a).toEqual(await digest(first));
  });

  it('a falsified mdhd duration is corrupt_file before any decoding', async () => {
    const path = join(dir, 'falsified.m4a');
    execFileSync('ffmpeg', [
      '-v',
      'error',
      '-y',
      '-f',
      'lavfi',
      '-i',
      'anullsrc=r=48000:cl=stereo',
      '-t',
      '60',
      '-c:a',
      'aac',
      path,
    ]);
    const b = new Uint8Array(readFileSync(path));
    const mdhd = Buffer.from(b).indexOf('mdhd') - 4;
    const v = new DataView(b.buffer);
    expect(b[mdhd + 8]).toBe(0); // version 0: timescale at +20, duration at +24
    v.setUint32(mdhd + 24, 2 * v.getUint32(mdhd + 20));
    writeFileSync(path, b);
    await expect(openAudioFileAs(path, 'm4a')).rejects.toMatchObject({ code: 'corrupt_file' });
  });
});
