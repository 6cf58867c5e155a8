// Long and highly compressed FLAC: every declared frame decodes (ffprobe, Debian /usr/bin/ffprobe,
// is the reference count) and memory stays bounded however little input a minute of audio takes.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decoder } from '@audio/decode-flac';
import { openAudioFileAs } from '../../src/decode/index.ts';
import { FLAC_MAX_HEADER_BYTES, FlacInputSlicer, flacHeaderBlockSize } from '../../src/decode/compressed-flac.ts';
import type { DecodedAudio } from '../../src/decode/types.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');
let dir = '';

function encode(name: string, source: string, args: string[]): string {
  const out = join(dir, name);
  execFileSync('ffmpeg', ['-v', 'error', '-y', '-f', 'lavfi', '-i', source, ...args, out]);
  return out;
}
/** Samples per channel as ffmpeg's FLAC decoder delivers them: the sum of nb_samples over decoded frames. */
function ffprobeDecodedFrames(path: string): number {
  const out = execFileSync(
    'ffprobe',
    ['-v', 'error', '-select_streams', 'a', '-show_entries', 'frame=nb_samples', '-of', 'csv=p=0', path],
    { maxBuffer: 1 << 26 },
  );
  return out
    .toString()
    .split('\n')
    .reduce((sum, line) => sum + (Number(line) || 0), 0);
}
function ffprobeDeclaredFrames(path: string): number {
  return Number(
    execFileSync('ffprobe', ['-v', 'error', '-show_entries', 'stream=duration_ts', '-of', 'csv=p=0', path])
      .toString()
      .trim(),
  );
}
async function drain(d: DecodedAudio, onBlock?: () => void): Promise<void> {
  for await (const _ of d.blocks) onBlock?.();
}
/** Frame starts by header and coded frame number in sequence (fixed block size), as a reader outside the decoder sees them. */
function frameStarts(b: Uint8Array): number[] {
  const starts: number[] = [];
  for (let o = b.indexOf(0xff); o >= 0; o = b.indexOf(0xff, o + 1)) {
    if (flacHeaderBlockSize(b, o) === 0) continue;
    const lead = b[o + 4];
    const extra = lead < 0x80 ? 0 : lead < 0xe0 ? 1 : lead < 0xf0 ? 2 : 3;
    let n = extra ? lead & (0x3f >> extra) : lead;
    for (let i = 1; i <= extra; i++) n = n * 64 + (b[o + 4 + i] & 0x3f);
    if (n === starts.length) starts.push(o);
  }
  return starts;
}
/** Decodes `bytes` through the slicer in input chunks of `chunkBytes`, as openCompressed feeds the package. */
async function decodeSliced(
  bytes: Uint8Array,
  chunkBytes: number,
  channels: number,
  slices?: number[],
): Promise<Float32Array[]> {
  const codec = await decoder();
  const slicer = new FlacInputSlicer(channels);
  const parts: Float32Array[][] = [];
  let fed = 0;
  try {
    for (let at = 0; at < bytes.length; at += chunkBytes) {
      const last = at + chunkBytes >= bytes.length;
      for (const slice of slicer.push(bytes.slice(at, at + chunkBytes), last)) {
        fed += slice.length;
        slices?.push(fed);
        parts.push(codec.decode(slice).channelData);
      }
    }
    parts.push(codec.flush().channelData);
  } finally {
    codec.free();
  }
  return Array.from({ length: channels }, (_, c) => {
    const out = new Float32Array(parts.reduce((n, p) => n + (p[c]?.length ?? 0), 0));
    let at = 0;
    for (const p of parts)
      if (p[c]) {
        out.set(p[c], at);
        at += p[c].length;
      }
    return out;
  });
}

describe.skipIf(!hasFfmpeg)('long FLAC', () => {
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'earmark-flac-long-'));
  });
  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('no input slice ends inside a frame header, whatever the input chunk size', async () => {
    const path = encode('tone.flac', 'aevalsrc=0.5*sin(2*PI*1000*t)|0.3*sin(2*PI*440*t):s=48000:d=3', [
      '-c:a',
      'flac',
      '-frame_size',
      '256',
    ]);
    const bytes = new Uint8Array(readFileSync(path));
    const starts = frameStarts(bytes);
    expect(starts.length).toBe(Math.ceil((3 * 48000) / 256));
    const whole = await decodeSliced(bytes, bytes.length, 2);
    expect(whole[0].length).toBe(ffprobeDecodedFrames(path));
    // 1-byte and 7-byte chunks put a chunk boundary inside nearly every header.
    for (const chunkBytes of [1, 7, 100, 4099]) {
      const ends: number[] = [];
      const sliced = await decodeSliced(bytes, chunkBytes, 2, ends);
      const cut = ends.filter((end) => starts.some((s) => end > s && end < s + FLAC_MAX_HEADER_BYTES));
      expect(cut, `chunks of ${chunkBytes} bytes`).toEqual([]);
      expect(sliced[0].length, `chunks of ${chunkBytes} bytes`).toBe(whole[0].length);
      for (let c = 0; c < 2; c++)
        expect(Buffer.compare(Buffer.from(sliced[c].buffer), Buffer.from(whole[c].buffer))).toBe(0);
    }
  });

  // 6 hours of ffmpeg's default FLAC (stereo 48 kHz silence) lost 4 frames, one per frame header
  // split by a 256 KiB input boundary; with the default frame size the first such split comes at
  // 2 h 58 min (10700 s reproduced it, 10690 s did not). 256-frame frames move the boundaries:
  // 600 s reproduced it (one frame short), 590 s did not. Silence encodes in about half a second.
  it('600 s of silence in 256-frame FLAC frames decodes to exactly the declared frames', async () => {
    const path = encode('silence-600s.flac', 'anullsrc=r=48000:cl=stereo', [
      '-t',
      '600',
      '-c:a',
      'flac',
      '-frame_size',
      '256',
    ]);
    const declared = ffprobeDeclaredFrames(path);
    expect(declared).toBe(600 * 48000);
    const d = await openAudioFileAs(path, 'flac');
    expect(d.format.frames).toBe(declared);
    await drain(d);
    expect(d.framesDecoded).toBe(declared);
    expect(d.framesDecoded).toBe(ffprobeDecodedFrames(path));
    expect(d.warnings).toEqual([]);
  }, 30_000);

  // 30 minutes of silence are 306 KB of FLAC: one 256 KiB read used to become 75 million frames
  // (600 MB of float) in one decoder call. In Ogg the same 30 minutes are 363 KB.
  it.each([
    ['silence-1800s.flac', 'flac', ['-c:a', 'flac']],
    ['silence-1800s.oga', 'ogg', ['-c:a', 'flac', '-f', 'ogg']],
  ] as const)(
    '%s decodes with bounded memory',
    async (name, container, args) => {
      const path = encode(name, 'anullsrc=r=48000:cl=stereo', ['-t', '1800', ...args]);
      const d = await openAudioFileAs(path, container);
      const used = () => {
        const m = process.memoryUsage();
        return m.heapUsed + m.arrayBuffers;
      };
      const before = used();
      let peak = before;
      await drain(d, () => {
        peak = Math.max(peak, used());
      });
      expect(d.framesDecoded).toBe(1800 * 48000);
      if (process.env.EARMARK_PRINT_MEMORY) console.log(name, 'peak growth MB', ((peak - before) / 1e6).toFixed(1));
      // Garbage counts until a collection runs (V8 starts one after about 64 MB of new external memory, from memory).
      expect(peak - before).toBeLessThan(160 * 1024 * 1024);
    },
    30_000,
  );
});
