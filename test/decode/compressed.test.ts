// Checks the compressed decoder against ffmpeg (Debian /usr/bin/ffmpeg) as the reference decoder.
// Signals are generated here; nothing third-party is committed.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { decodeAll } from '../helpers/decode-all.ts';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openAudioFileAs } from '../../src/decode/index.ts';
import type { Container } from '../../src/decode/types.ts';
import { EarmarkError } from '../../src/errors/index.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');
// Different content per channel so swapped or folded channels show up.
const STEREO = 'aevalsrc=0.5*sin(2*PI*1000*t)|0.3*sin(2*PI*440*t):s=48000:d=5';
const DUAL = 'sine=frequency=1000:sample_rate=48000:duration=5';
let dir = '';

function ffmpeg(args: string[]): void {
  execFileSync('ffmpeg', ['-v', 'error', '-y', ...args]);
}
function encode(name: string, source: string, codecArgs: string[], channels = 2): string {
  const out = join(dir, name);
  ffmpeg(['-f', 'lavfi', '-i', source, '-ac', String(channels), ...codecArgs, out]);
  return out;
}
/** ffmpeg's own decode as planar float (relies on: ffmpeg f32le output is interleaved native-endian float). */
function reference(path: string, channels: number): Float32Array[] {
  const raw = execFileSync('ffmpeg', ['-v', 'error', '-i', path, '-f', 'f32le', '-ac', String(channels), '-'], {
    maxBuffer: 1 << 28,
  });
  const inter = new Float32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4);
  const frames = inter.length / channels;
  return Array.from({ length: channels }, (_, c) =>
    Float32Array.from({ length: frames }, (_, i) => inter[i * channels + c]),
  );
}
const rmsDb = (x: Float32Array): number => 10 * Math.log10(x.reduce((s, v) => s + v * v, 0) / x.length);

async function expectTypedOrTruncated(path: string, container: Container): Promise<void> {
  try {
    const d = await openAudioFileAs(path, container);
    await decodeAll(d);
    expect(d.warnings.map((w) => w.code)).toContain('truncated_data');
  } catch (e) {
    expect(e).toBeInstanceOf(EarmarkError);
    expect(['corrupt_file', 'unsupported_format', 'unsupported_encoding']).toContain((e as EarmarkError).code);
  }
}
async function expectTypedError(path: string, container: Container, code?: string): Promise<void> {
  const run = async () => {
    const d = await openAudioFileAs(path, container);
    await decodeAll(d);
  };
  await expect(run()).rejects.toBeInstanceOf(EarmarkError);
  if (code) await expect(run()).rejects.toMatchObject({ code });
}
function cut(path: string, fraction: number): string {
  const out = path.replace(/(\.\w+)$/, `-cut$1`);
  const b = readFileSync(path);
  writeFileSync(out, b.subarray(0, Math.floor(b.length * fraction)));
  return out;
}

describe.skipIf(!hasFfmpeg)('compressed decoders against ffmpeg', () => {
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'earmark-compressed-'));
  });
  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it.each([
    [16, 's16'],
    [24, 's32'],
  ])('FLAC %i-bit is bit-exact', async (bits, fmt) => {
    const f = encode(`f${bits}.flac`, STEREO, [
      '-c:a',
      'flac',
      '-sample_fmt',
      fmt,
      ...(bits === 24 ? ['-bits_per_raw_sample', '24'] : []),
    ]);
    const d = await openAudioFileAs(f, 'flac', { maxBlockFrames: 4096 });
    expect(d.format).toMatchObject({
      encoding: 'flac',
      sampleRate: 48000,
      channels: 2,
      bitsPerSample: bits,
      frames: 240000,
      durationSeconds: 5,
    });
    const ours = await decodeAll(d);
    const ref = reference(f, 2);
    expect(d.framesDecoded).toBe(ref[0].length);
    for (let c = 0; c < 2; c++) expect(Buffer.compare(Buffer.from(ours[c].buffer), Buffer.from(ref[c].buffer))).toBe(0);
    expect(d.warnings).toEqual([]);
  });

  // Slack: encoder priming/padding the two decoders may trim differently (common practice: AAC 1024-frame priming).
  const lossy: [string, string, Container, string[], number, string, number][] = [
    ['cbr.mp3', STEREO, 'mp3', ['-c:a', 'libmp3lame', '-b:a', '192k'], 2, 'mp3', 1152],
    ['vbr.mp3', STEREO, 'mp3', ['-c:a', 'libmp3lame', '-q:a', '2'], 2, 'mp3', 1152],
    ['dual.mp3', DUAL, 'mp3', ['-c:a', 'libmp3lame', '-b:a', '128k'], 2, 'mp3', 1152],
    ['mono.mp3', DUAL, 'mp3', ['-c:a', 'libmp3lame', '-b:a', '96k'], 1, 'mp3', 1152],
    ['front.m4a', STEREO, 'm4a', ['-c:a', 'aac', '-b:a', '128k', '-movflags', '+faststart'], 2, 'aac', 2048],
    ['end.m4a', STEREO, 'm4a', ['-c:a', 'aac', '-b:a', '128k'], 2, 'aac', 2048],
    ['v.ogg', STEREO, 'ogg', ['-c:a', 'libvorbis', '-q:a', '4'], 2, 'vorbis', 2048],
    ['o.opus', STEREO, 'ogg', ['-c:a', 'libopus', '-b:a', '96k'], 2, 'opus', 960],
  ];
  it.each(lossy)(
    '%s: rate, channels, frame count and level match ffmpeg',
    async (name, src, container, args, channels, encoding, slack) => {
      const f = encode(name, src, args, channels);
      const d = await openAudioFileAs(f, container);
      expect(d.format).toMatchObject({ container, encoding, sampleRate: 48000, channels, bitsPerSample: null });
      const ours = await decodeAll(d);
      const ref = reference(f, channels);
      expect(ours.length).toBe(channels);
      expect(Math.abs(d.framesDecoded - ref[0].length)).toBeLessThanOrEqual(slack);
      for (let c = 0; c < channels; c++) expect(Math.abs(rmsDb(ours[c]) - rmsDb(ref[c]))).toBeLessThan(0.1);
      expect(d.warnings.filter((w) => w.code !== 'channels_restored')).toEqual([]);
    },
  );

  it('keeps identical-channel stereo MP3 as two channels', async () => {
    const d = await openAudioFileAs(join(dir, 'dual.mp3'), 'mp3');
    const [l, r] = await decodeAll(d);
    expect(d.format.channels).toBe(2);
    expect(r).toEqual(l);
  });

  it('yields blocks no longer than maxBlockFrames and frees on early stop', async () => {
    const d = await openAudioFileAs(join(dir, 'cbr.mp3'), 'mp3', { maxBlockFrames: 1000 });
    let n = 0;
    for await (const b of d.blocks) {
      expect(b.frames).toBeLessThanOrEqual(1000);
      if (++n === 3) break;
    }
    expect(d.framesDecoded).toBe(3000);
  });

  it.each([
    ['f16.flac', 'flac'],
    ['cbr.mp3', 'mp3'],
    ['vbr.mp3', 'mp3'],
    ['front.m4a', 'm4a'],
    ['end.m4a', 'm4a'],
    ['v.ogg', 'ogg'],
    ['o.opus', 'ogg'],
  ] as const)('%s cut at 50 %% warns or throws, never a silent short result', async (name, container) => {
    await expectTypedOrTruncated(cut(join(dir, name), 0.5), container);
  });

  it('a cut FLAC reports truncated_data at the frame it stopped', async () => {
    const d = await openAudioFileAs(cut(join(dir, 'f16.flac'), 0.5), 'flac');
    await decodeAll(d);
    expect(d.warnings).toEqual([expect.objectContaining({ code: 'truncated_data', atFrame: d.framesDecoded })]);
  });

  it.each([
    ['f16.flac', 'flac'],
    ['cbr.mp3', 'mp3'],
    ['front.m4a', 'm4a'],
    ['v.ogg', 'ogg'],
    ['o.opus', 'ogg'],
  ] as const)('%s with random bytes after the first 64 throws a typed error', async (name, container) => {
    const b = readFileSync(join(dir, name));
    const junk = Buffer.concat([
      b.subarray(0, 64),
      Buffer.from(Array.from({ length: b.length - 64 }, () => (Math.random() * 256) | 0)),
    ]);
    const out = join(dir, `junk-${name}`);
    writeFileSync(out, junk);
    await expectTypedError(out, container);
  });

  it.each([
    ['f16.flac', 'flac'],
    ['cbr.mp3', 'mp3'],
    ['front.m4a', 'm4a'],
  ] as const)('%s damaged in the middle throws corrupt_file', async (name, container) => {
    const b = Buffer.from(readFileSync(join(dir, name)));
    const at = Math.floor(b.length / 3);
    for (let i = 0; i < 4000; i++) b[at + i] = (Math.random() * 256) | 0;
    const out = join(dir, `mid-${name}`);
    writeFileSync(out, b);
    await expectTypedError(out, container, 'corrupt_file');
  });

  it('refuses a whole-file M4A over the decoded-size cap before decoding', async () => {
    const f = join(dir, 'end.m4a');
    expect(statSync(f).size).toBeGreaterThan(0);
    await expect(openAudioFileAs(f, 'm4a', { maxDecodedBytes: 1_000_000 })).rejects.toMatchObject({
      code: 'decoded_size_exceeded',
    });
  });
});
