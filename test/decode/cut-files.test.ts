// A file cut short says where its audio stops: truncated_data with atFrame on every path, at
// the frame ffmpeg (Debian /usr/bin/ffmpeg, ffprobe) also decodes up to. Files are ffmpeg's own
// output cut at half their bytes; lossy decoders may differ from ffmpeg by their priming and the
// partial last frame (common practice: one codec frame).
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openAudioFile, type DecodedAudio } from '../../src/decode/index.ts';
import { encodePcmFrames, wavHeader } from '../../src/encode/wav.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');
const SOURCE = 'aevalsrc=0.5*sin(2*PI*1000*t)|0.3*sin(2*PI*440*t):s=48000:d=5';
let dir = '';

async function drain(d: DecodedAudio): Promise<void> {
  for await (const _ of d.blocks) void _;
}
/** Frames ffmpeg decodes from `path`: the sum of nb_samples over its decoded frames. */
function ffmpegFrames(path: string): number {
  // Its complaints about the cut last packet are expected: stderr is not shown.
  const out = execFileSync(
    'ffprobe',
    ['-v', 'error', '-select_streams', 'a', '-show_entries', 'frame=nb_samples', '-of', 'csv=p=0', path],
    { stdio: ['ignore', 'pipe', 'ignore'] },
  );
  return out
    .toString()
    .split('\n')
    .reduce((sum, line) => sum + (Number(line) || 0), 0);
}
function cutCopy(name: string, args: string[]): string {
  const whole = join(dir, name);
  execFileSync('ffmpeg', ['-v', 'error', '-y', '-f', 'lavfi', '-i', SOURCE, ...args, whole]);
  const cut = join(dir, `cut-${name}`);
  const bytes = readFileSync(whole);
  writeFileSync(cut, bytes.subarray(0, Math.floor(bytes.length / 2)));
  return cut;
}

describe.skipIf(!hasFfmpeg)('cut files: truncated_data at the frame the audio stops', () => {
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'earmark-cut-'));
  });
  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  // [file, ffmpeg arguments, frames ours may differ from ffmpeg's]
  const cases: [string, string[], number][] = [
    ['s24.wav', ['-c:a', 'pcm_s24le'], 0],
    ['f32.wav', ['-c:a', 'pcm_f32le'], 0],
    ['rf64.wav', ['-c:a', 'pcm_s24le', '-rf64', 'always'], 0],
    ['s16.aiff', ['-c:a', 'pcm_s16be'], 0],
    ['f32.aifc', ['-c:a', 'pcm_f32be', '-f', 'aiff'], 0],
    ['s16.flac', ['-c:a', 'flac'], 0],
    ['s16.caf', ['-c:a', 'pcm_s16be', '-f', 'caf'], 0],
    ['cbr.mp3', ['-c:a', 'libmp3lame', '-b:a', '192k'], 1152],
    ['no-info.mp3', ['-c:a', 'libmp3lame', '-b:a', '192k', '-write_xing', '0'], 1152],
    ['adts.aac', ['-c:a', 'aac'], 1024],
    ['faststart.m4a', ['-c:a', 'aac', '-movflags', '+faststart'], 1024],
    ['vorbis.ogg', ['-c:a', 'libvorbis'], 0],
    ['opus.opus', ['-c:a', 'libopus'], 0],
    ['opus.webm', ['-c:a', 'libopus'], 0],
  ];
  it.each(cases)(
    '%s cut at half its bytes',
    async (name, args, slack) => {
      const path = cutCopy(name, args);
      const d = await openAudioFile(path);
      await drain(d);
      expect(d.framesDecoded).toBeGreaterThan(0);
      expect(Math.abs(d.framesDecoded - ffmpegFrames(path))).toBeLessThanOrEqual(slack);
      expect(d.warnings).toEqual([expect.objectContaining({ code: 'truncated_data', atFrame: d.framesDecoded })]);
    },
    20_000,
  );
});

describe('declared lengths and tiny WAVs', () => {
  let dir = '';
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'earmark-tiny-'));
  });
  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('RF64 whose ds64 sample count is more than its data holds: truncated_data where the data ends', async () => {
    const frames = 1000;
    const bytes = Buffer.concat([
      wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: 16, float: false, frames, rf64: true }),
      Buffer.alloc(frames * 4),
    ]);
    // EBU Tech 3306 ds64: after its 8-byte header, riffSize (8), dataSize (8), sampleCount (8).
    const ds64Body = bytes.indexOf('ds64') + 8;
    bytes.writeUInt32LE(frames + 500, ds64Body + 16);
    const path = join(dir, 'ds64-count.wav');
    writeFileSync(path, bytes);
    const d = await openAudioFile(path);
    await drain(d);
    expect(d.framesDecoded).toBe(frames);
    expect(d.warnings).toEqual([expect.objectContaining({ code: 'truncated_data', atFrame: frames })]);
  });

  it('a WAV with an empty data chunk decodes to zero frames, no error, no warning', async () => {
    const path = join(dir, 'empty-data.wav');
    writeFileSync(path, wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: 16, float: false, frames: 0 }));
    const d = await openAudioFile(path);
    let blocks = 0;
    for await (const _ of d.blocks) blocks++;
    expect({ blocks, frames: d.framesDecoded, declared: d.format.frames, warnings: d.warnings }).toEqual({
      blocks: 0,
      frames: 0,
      declared: 0,
      warnings: [],
    });
  });

  it('a WAV with a header and one frame decodes that frame', async () => {
    const path = join(dir, 'one-frame.wav');
    writeFileSync(
      path,
      Buffer.concat([
        wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: 16, float: false, frames: 1 }),
        encodePcmFrames([Float32Array.of(0.5), Float32Array.of(-0.25)], 16, false),
      ]),
    );
    const d = await openAudioFile(path);
    const got: number[][] = [];
    for await (const b of d.blocks) got.push(b.channelData.map((c) => c[0]));
    expect(got).toEqual([[0.5, -0.25]]);
    expect(d.framesDecoded).toBe(1);
    expect(d.warnings).toEqual([]);
  });

  it('a WAV whose data chunk header declares samples that are not there: truncated_data at frame 0', async () => {
    const path = join(dir, 'header-only.wav');
    writeFileSync(path, wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: 16, float: false, frames: 480 }));
    const d = await openAudioFile(path);
    await drain(d);
    expect(d.framesDecoded).toBe(0);
    expect(d.warnings).toEqual([expect.objectContaining({ code: 'truncated_data', atFrame: 0 })]);
  });
});
