// Seeking excerpts (decode/seek.ts through cutExcerpt) against decoding from the start: the same
// WAV bytes, so the same samples, for PCM containers and FLAC (with and without a seek table).
import { spawnSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openAudioFileAt } from '../../src/decode/seek.ts';
import { writeAiffFile, writeWavFile } from '../../src/encode/wav.ts';
import { cutExcerpt } from '../../src/engine/excerpt.ts';
import { hasTool } from '../helpers/tools.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-excerpt-seek-'));
const hasFfmpeg = hasTool('ffmpeg');
const RATE = 44100;
const SECONDS = 30;

/** Seeded noise with a slow ramp, so every frame differs and a shifted start shows. */
function* noise(channels: number): Generator<Float32Array[]> {
  let seed = 12345;
  const frames = SECONDS * RATE;
  for (let start = 0; start < frames; start += 8192) {
    const n = Math.min(8192, frames - start);
    const block = Array.from({ length: channels }, () => new Float32Array(n));
    for (let i = 0; i < n; i++) {
      for (let c = 0; c < channels; c++) {
        seed = (seed * 1103515245 + 12345) >>> 0;
        block[c][i] = (seed / 2 ** 32 - 0.5) * 0.6 + ((start + i) % 4410) / 44100;
      }
    }
    yield block;
  }
}

const SPANS: [number, number][] = [
  [0, 1.5],
  [0.01, 0.2],
  [7.123, 9],
  [14.99999, 21],
  [25.5, 31],
];

async function expectSeekEqualsFromStart(path: string, method: string): Promise<void> {
  for (const [start, end] of SPANS) {
    const seeked = await cutExcerpt(path, start, end);
    const reference = await cutExcerpt(path, start, end, { seek: false });
    expect([seeked.startSeconds, seeked.endSeconds]).toEqual([reference.startSeconds, reference.endSeconds]);
    expect(Buffer.compare(Buffer.from(seeked.wav), Buffer.from(reference.wav)), `${path} ${start}-${end}`).toBe(0);
  }
  const opened = await openAudioFileAt(path, Math.floor(14.99999 * RATE));
  expect(opened.method).toBe(method);
  expect(opened.firstFrame).toBeLessThanOrEqual(Math.floor(14.99999 * RATE));
}

describe('seeking excerpts equal decoding from the start', () => {
  for (const [name, bits, float] of [
    ['16-bit', 16, false],
    ['24-bit', 24, false],
    ['32-bit float', 32, true],
  ] as const) {
    it(`WAV ${name}`, async () => {
      const path = join(dir, `noise-${bits}${float ? 'f' : ''}.wav`);
      await writeWavFile(path, { sampleRate: RATE, channels: 2, bitsPerSample: bits, float }, noise(2));
      await expectSeekEqualsFromStart(path, 'pcm_offset');
    });
  }

  it('RF64, three channels', async () => {
    const path = join(dir, 'noise.rf64.wav');
    await writeWavFile(path, { sampleRate: RATE, channels: 3, bitsPerSample: 24, float: false, rf64: true }, noise(3));
    await expectSeekEqualsFromStart(path, 'pcm_offset');
  });

  it('AIFF 24-bit and AIFF-C float', async () => {
    const aiff = join(dir, 'noise.aiff');
    await writeAiffFile(aiff, { sampleRate: RATE, channels: 2, bitsPerSample: 24 }, noise(2));
    await expectSeekEqualsFromStart(aiff, 'pcm_offset');
    const aifc = join(dir, 'noise.aifc');
    await writeAiffFile(aifc, { sampleRate: RATE, channels: 2, bitsPerSample: 32, compression: 'fl32' }, noise(2));
    await expectSeekEqualsFromStart(aifc, 'pcm_offset');
  });

  it.skipIf(!hasFfmpeg)(
    'FLAC with a seek table, without one (nor a length), with long frames, and silent',
    async () => {
      const wav = join(dir, 'flac-source.wav');
      await writeWavFile(wav, { sampleRate: RATE, channels: 2, bitsPerSample: 24, float: false }, noise(2));
      const cases: [string, string[]][] = [
        ['table.flac', ['-c:a', 'flac']],
        ['no-table.flac', ['-c:a', 'flac', '-seekable', '0']],
        ['long-frames.flac', ['-c:a', 'flac', '-frame_size', '65535']],
      ];
      for (const [file, args] of cases) {
        const path = join(dir, file);
        expect(spawnSync('ffmpeg', ['-loglevel', 'error', '-y', '-i', wav, ...args, path]).status).toBe(0);
        await expectSeekEqualsFromStart(path, 'flac_frame');
      }
      // Digital silence: frames of a few bytes, where byte offsets say little about time.
      const silent = join(dir, 'silent.flac');
      expect(
        spawnSync('ffmpeg', [
          '-loglevel',
          'error',
          '-y',
          '-f',
          'lavfi',
          '-i',
          `anullsrc=r=${RATE}:cl=stereo`,
          '-t',
          String(SECONDS),
          '-c:a',
          'flac',
          '-frame_size',
          '65535',
          silent,
        ]).status,
      ).toBe(0);
      await expectSeekEqualsFromStart(silent, 'flac_frame');
    },
  );

  it.skipIf(!hasFfmpeg)(
    'MP3 (LAME Info header) seeks by frame headers: the same span, within 2 steps of 24 bits',
    async () => {
      const wav = join(dir, 'mp3-source.wav');
      await writeWavFile(wav, { sampleRate: RATE, channels: 2, bitsPerSample: 16, float: false }, noise(2));
      for (const [file, args] of [
        ['stereo.mp3', ['-b:a', '128k']],
        ['mono-vbr.mp3', ['-ac', '1', '-q:a', '4']],
      ] as const) {
        const path = join(dir, file);
        expect(
          spawnSync('ffmpeg', ['-loglevel', 'error', '-y', '-i', wav, '-c:a', 'libmp3lame', ...args, path]).status,
        ).toBe(0);
        for (const [start, end] of SPANS) {
          const seeked = await cutExcerpt(path, start, end);
          const reference = await cutExcerpt(path, start, end, { seek: false });
          expect([seeked.startSeconds, seeked.endSeconds]).toEqual([reference.startSeconds, reference.endSeconds]);
          expect(seeked.wav.length).toBe(reference.wav.length);
          // mpg123's float arithmetic is not quite independent of where decoding began: about one float32 step.
          let maxSteps = 0;
          const s24 = (w: Uint8Array, i: number) => ((w[i] | (w[i + 1] << 8) | (w[i + 2] << 16)) << 8) >> 8;
          for (let i = 44; i < seeked.wav.length; i += 3)
            maxSteps = Math.max(maxSteps, Math.abs(s24(seeked.wav, i) - s24(reference.wav, i)));
          expect(maxSteps, `${file} ${start}-${end}`).toBeLessThanOrEqual(2);
        }
        expect((await openAudioFileAt(path, 15 * RATE)).method).toBe('mp3_frame');
      }
    },
  );

  it.skipIf(!hasFfmpeg)('other formats (AAC in M4A) decode from the start and cut the same span', async () => {
    const wav = join(dir, 'm4a-source.wav');
    await writeWavFile(wav, { sampleRate: RATE, channels: 2, bitsPerSample: 16, float: false }, noise(2));
    const m4a = join(dir, 'noise.m4a');
    expect(
      spawnSync('ffmpeg', ['-loglevel', 'error', '-y', '-i', wav, '-c:a', 'aac', '-b:a', '128k', m4a]).status,
    ).toBe(0);
    await expectSeekEqualsFromStart(m4a, 'from_start');
  });
});
