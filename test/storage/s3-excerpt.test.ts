// Excerpts on the S3 backend fetch only the bytes a PCM excerpt reads (a sparse temp file), and
// fall back to the whole copy otherwise; either way the excerpt equals the file backend's.
import { execFileSync } from 'node:child_process';
import { closeSync, mkdtempSync, openSync, readFileSync, rmSync, statSync, writeFileSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openAudioFile } from '../../src/decode/index.ts';
import { encodePcmFrames, wavHeader } from '../../src/encode/wav.ts';
import { cutExcerpt } from '../../src/engine/excerpt.ts';
import { openStorage } from '../../src/storage/index.ts';
import { S3Storage } from '../../src/storage/s3.ts';
import { HEAD_BYTES, planExcerpt } from '../../src/storage/sparse-excerpt.ts';
import { startS3Server, type TestS3 } from '../helpers/s3-server.ts';
import { hasTool, toolPath } from '../helpers/tools.ts';

let s3: TestS3;
let storage: S3Storage;
let dir: string;
const RATE = 48_000;

beforeAll(async () => {
  s3 = await startS3Server();
  dir = mkdtempSync(join(tmpdir(), 'earmark-s3-excerpt-'));
  const opened = await openStorage(s3.location('excerpt'), join(dir, 'local'), { shortLivedCopies: true });
  if (!(opened instanceof S3Storage)) throw new Error('expected the S3 backend');
  storage = opened;
});

afterAll(async () => {
  storage?.client.destroy();
  await s3?.close();
  rmSync(dir, { recursive: true, force: true });
});

/** Stereo 16-bit noise-like tones, with a LIST chunk after the samples (as many editors write). */
function longWav(seconds: number): Buffer {
  const frames = seconds * RATE;
  const left = new Float32Array(frames);
  const right = new Float32Array(frames);
  let seed = 12345;
  for (let i = 0; i < frames; i++) {
    seed = (seed * 1103515245 + 12345) >>> 0;
    left[i] = 0.5 * Math.sin((2 * Math.PI * 440 * i) / RATE) + ((seed >>> 16) / 65536 - 0.5) * 0.1;
    right[i] = 0.3 * Math.sin((2 * Math.PI * 997 * i) / RATE);
  }
  const header = Buffer.from(wavHeader({ sampleRate: RATE, channels: 2, bitsPerSample: 16, float: false, frames }));
  const body = Buffer.from(encodePcmFrames([left, right], 16, false));
  const text = Buffer.from('INFOISFT\x08\x00\x00\x00earmark\x00');
  const list = Buffer.concat([Buffer.from('LIST'), Buffer.alloc(4), text]);
  list.writeUInt32LE(text.length, 4);
  const file = Buffer.concat([header, body, list]);
  file.writeUInt32LE(file.length - 8, 4);
  return file;
}

async function store(bytes: Buffer): Promise<string> {
  return (await storage.saveUpload(Readable.from([bytes]), bytes.length + 1)).key;
}

describe('excerptCopy on S3', () => {
  const wav = longWav(180);
  const path = () => join(dir, 'long.wav');
  beforeAll(() => writeFileSync(path(), wav));

  it('fetches only the head, the span and the tail of a long WAV, and cuts the same excerpt', async () => {
    const key = await store(wav);
    const copy = await storage.excerptCopy(key, 100, 102);
    try {
      const info = statSync(copy.path);
      expect(info.size).toBe(wav.length);
      expect(copy.sha256).toBeNull();
      expect(copy.fetchedBytes).toBeLessThan(3 * 1024 * 1024);
      // The holes take no disk (a filesystem without sparse files would still be correct).
      expect(info.blocks * 512).toBeLessThan(wav.length / 4);
      console.log(
        `excerpt 100-102 s: fetched ${copy.fetchedBytes} of ${wav.length} bytes, ${info.blocks * 512} on disk`,
      );
      const fromS3 = await cutExcerpt(copy.path, 100, 102);
      const fromFile = await cutExcerpt(path(), 100, 102);
      expect(Buffer.from(fromS3.wav).equals(Buffer.from(fromFile.wav))).toBe(true);
      expect(fromS3.endSeconds).toBeCloseTo(102, 6);
      // The span at the very start and at the very end too.
      for (const [from, to] of [
        [0, 1.5],
        [178.5, 181],
      ]) {
        const part = await storage.excerptCopy(key, from, to);
        try {
          const a = await cutExcerpt(part.path, from, to);
          const b = await cutExcerpt(path(), from, to);
          expect(Buffer.from(a.wav).equals(Buffer.from(b.wav))).toBe(true);
        } finally {
          await part.release();
        }
      }
    } finally {
      await copy.release();
    }
    expect(statSync(copy.path, { throwIfNoEntry: false })).toBeUndefined();
  });

  it('plans every byte the excerpt reads: with the holes filled with garbage it cuts the same excerpt', async () => {
    const head = wav.subarray(0, HEAD_BYTES[0]);
    const plan = await planExcerpt(head, wav.length, 60.25, 72.25);
    if (plan.kind !== 'ranges') throw new Error(`expected ranges, got ${plan.kind}`);
    const poisoned = join(dir, 'poisoned.wav');
    writeFileSync(poisoned, Buffer.alloc(wav.length, 0x55));
    const fd = openSync(poisoned, 'r+');
    for (const [from, to] of [[0, head.length] as [number, number], ...plan.ranges])
      writeSync(fd, wav, from, to - from, from);
    closeSync(fd);
    const a = await cutExcerpt(poisoned, 60.25, 72.25);
    const b = await cutExcerpt(path(), 60.25, 72.25);
    expect(Buffer.from(a.wav).equals(Buffer.from(b.wav))).toBe(true);
    // The header parse (chunks before and after the samples) reads the same too.
    const [poisonedAudio, realAudio] = [await openAudioFile(poisoned), await openAudioFile(path())];
    expect(poisonedAudio.format).toEqual(realAudio.format);
    expect(poisonedAudio.warnings).toEqual(realAudio.warnings);
    // And the check is sensitive: garbage over the span shows.
    const fd2 = openSync(poisoned, 'r+');
    writeSync(fd2, Buffer.alloc(4096, 0x55), 0, 4096, plan.ranges[0][0] + 8192);
    closeSync(fd2);
    const c = await cutExcerpt(poisoned, 60.25, 72.25);
    expect(Buffer.from(c.wav).equals(Buffer.from(b.wav))).toBe(false);
  });

  it('falls back to the whole copy when the samples start after the head it reads', async () => {
    // A JUNK chunk of 2 MiB before fmt: the header is longer than the heads tried.
    const junk = Buffer.alloc(8 + 2 * 1024 * 1024);
    junk.write('JUNK', 0, 'ascii');
    junk.writeUInt32LE(2 * 1024 * 1024, 4);
    const padded = Buffer.concat([wav.subarray(0, 12), junk, wav.subarray(12, 4 * 1024 * 1024)]);
    padded.writeUInt32LE(padded.length - 8, 4);
    const key = await store(padded);
    const copy = await storage.excerptCopy(key, 1, 2);
    try {
      expect(copy.fetchedBytes).toBeUndefined();
      expect(readFileSync(copy.path).equals(padded)).toBe(true);
    } finally {
      await copy.release();
    }
  });

  it.skipIf(!hasTool('ffmpeg'))(
    'falls back to the whole copy for a compressed file, with the same excerpt',
    async () => {
      const flac = join(dir, 'short.flac');
      const source = join(dir, 'short.wav');
      writeFileSync(source, longWav(20));
      execFileSync(toolPath('ffmpeg') ?? 'ffmpeg', ['-v', 'error', '-y', '-i', source, flac]);
      const bytes = readFileSync(flac);
      const key = await store(bytes);
      const copy = await storage.excerptCopy(key, 5, 7);
      try {
        expect(copy.fetchedBytes).toBeUndefined();
        expect(copy.sha256).not.toBeNull();
        expect(readFileSync(copy.path).equals(bytes)).toBe(true);
        const a = await cutExcerpt(copy.path, 5, 7);
        const b = await cutExcerpt(flac, 5, 7);
        expect(Buffer.from(a.wav).equals(Buffer.from(b.wav))).toBe(true);
      } finally {
        await copy.release();
      }
    },
  );
});
