// Our FLAC decoder (src/decode/flac) against ffmpeg's (Debian /usr/bin/ffmpeg) bit for bit, on
// files ffmpeg and sox (Debian /usr/bin/sox) write here with many encoder settings: every subframe
// type (RFC 9639 section 9.2), every stereo mode (section 4.2), wasted bits, block sizes from 16 to
// 65535, LPC orders up to 32. Also the pipeline's final samples against what the decoder package
// gave before (kept for Ogg FLAC), and damaged input.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { FlacInputSlicer } from '../../src/decode/compressed-flac.ts';
import { requantizeInto } from '../../src/decode/compressed-output.ts';
import { FlacCodec } from '../../src/decode/flac/codec.ts';
import { frameHeaderBytes } from '../../src/decode/flac/frame.ts';
import { openAudioFileAs } from '../../src/decode/index.ts';
import { EarmarkError } from '../../src/errors/index.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');
const hasSox = hasTool('sox');
let dir = '';

// Music-like: two tones, one swelling, and a little noise; the channels differ.
const tones = (rate: number, seconds: number, channels: number): string => {
  const ch = (k: number) => `0.4*sin(2*PI*${220 + 110 * k}*t)*(0.6+0.4*sin(2*PI*t/${1 + k}))+0.05*random(${k})`;
  return `aevalsrc=${Array.from({ length: channels }, (_, k) => ch(k)).join('|')}:s=${rate}:d=${seconds}`;
};

function ffmpegEncode(name: string, source: string, args: string[]): string {
  const out = join(dir, name);
  execFileSync('ffmpeg', ['-v', 'error', '-y', '-f', 'lavfi', '-i', source, ...args, '-c:a', 'flac', out]);
  return out;
}

/** STREAMINFO's channels and bits per sample (RFC 9639 section 8.2), the fLaC marker at 0. */
function streamInfo(b: Uint8Array): { channels: number; bits: number } {
  return { channels: ((b[20] >> 1) & 7) + 1, bits: (((b[20] & 1) << 4) | (b[21] >> 4)) + 1 };
}

/** ffmpeg's decode as interleaved integers (its s32 output holds the sample in the top bits). */
function ffmpegIntegers(path: string, bits: number): Int32Array {
  const raw = execFileSync('ffmpeg', ['-v', 'error', '-i', path, '-f', 's32le', '-'], { maxBuffer: 1 << 28 });
  const s32 = new Int32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4);
  return s32.map((v) => v >> (32 - bits));
}

/** Our codec fed through the FLAC slicer in `chunkBytes` pieces; interleaved integers and error messages. */
function ours(bytes: Uint8Array, chunkBytes: number): { ints: Int32Array; errors: string[] } {
  const { channels, bits } = streamInfo(bytes);
  const codec = new FlacCodec();
  const slicer = new FlacInputSlicer(channels);
  const parts: number[] = [];
  const errors: string[] = [];
  const take = (r: ReturnType<FlacCodec['decode']>) => {
    errors.push(...(r.errors ?? []).map((e) => e.message));
    const n = r.samplesDecoded ?? 0;
    for (let i = 0; i < n; i++) for (let c = 0; c < channels; c++) parts.push(r.channelData[c][i] * 2 ** (bits - 1));
  };
  for (let at = 0; at < bytes.length; at += chunkBytes) {
    const last = at + chunkBytes >= bytes.length;
    for (const s of slicer.push(bytes.slice(at, at + chunkBytes), last)) take(codec.decode(s));
  }
  take(codec.flush());
  return { ints: Int32Array.from(parts), errors };
}

/** sox's decode (libFLAC) the same way: for the file ffmpeg 5.1 decodes to nothing. */
function soxIntegers(path: string, bits: number): Int32Array {
  const raw = execFileSync('sox', [path, '-t', 's32', '-'], { maxBuffer: 1 << 28 });
  const s32 = new Int32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4);
  return s32.map((v) => v >> (32 - bits));
}

function expectSameAsReference(path: string, reference = ffmpegIntegers): void {
  const bytes = new Uint8Array(readFileSync(path));
  const ref = reference(path, streamInfo(bytes).bits);
  for (const chunk of [256 * 1024, 1000]) {
    const { ints, errors } = ours(bytes, chunk);
    expect(errors).toEqual([]);
    expect(ints.length).toBe(ref.length);
    expect(Buffer.compare(Buffer.from(ints.buffer), Buffer.from(ref.buffer))).toBe(0);
  }
}

describe.skipIf(!hasFfmpeg)('our FLAC decoder against ffmpeg, bit for bit', () => {
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'earmark-flac-'));
  });
  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  const s16 = ['-sample_fmt', 's16'];
  const s24 = ['-sample_fmt', 's32', '-bits_per_raw_sample', '24'];
  // [name, source, encoder arguments]
  const cases: [string, string, string[]][] = [
    ...[0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12].map((level): [string, string, string[]] => [
      `level ${level} 16-bit`,
      tones(44100, 2, 2),
      [...s16, '-compression_level', String(level)],
    ]),
    ...[0, 5, 8, 12].map((level): [string, string, string[]] => [
      `level ${level} 24-bit`,
      tones(48000, 2, 2),
      [...s24, '-compression_level', String(level)],
    ]),
    ...['none', 'fixed', 'levinson', 'cholesky'].map((t): [string, string, string[]] => [
      `lpc_type ${t}`,
      tones(44100, 1, 2),
      [...s16, '-lpc_type', t],
    ]),
    ...['indep', 'left_side', 'right_side', 'mid_side'].map((m): [string, string, string[]] => [
      `ch_mode ${m} 16-bit`,
      tones(44100, 1, 2),
      [...s16, '-ch_mode', m],
    ]),
    ...['indep', 'left_side', 'right_side', 'mid_side'].map((m): [string, string, string[]] => [
      `ch_mode ${m} 24-bit`,
      tones(96000, 1, 2),
      [...s24, '-ch_mode', m],
    ]),
    ...['estimation', '2level', '4level', '8level', 'search', 'log'].map((m): [string, string, string[]] => [
      `prediction_order_method ${m}`,
      tones(48000, 1, 2),
      [...s24, '-prediction_order_method', m],
    ]),
    ['mono 16-bit', tones(44100, 2, 1), s16],
    ['5.1 24-bit 48 kHz', tones(48000, 1, 6), s24],
    [
      '96 kHz 24-bit order 32',
      tones(96000, 1, 2),
      [...s24, '-lpc_type', 'cholesky', '-min_prediction_order', '32', '-max_prediction_order', '32'],
    ],
    [
      '16-bit order 32',
      tones(44100, 1, 2),
      [...s16, '-lpc_type', 'levinson', '-min_prediction_order', '32', '-max_prediction_order', '32'],
    ],
    [
      '16-bit orders 9 to 12',
      tones(44100, 1, 2),
      [...s16, '-min_prediction_order', '9', '-max_prediction_order', '12'],
    ],
    ['low coefficient precision', tones(44100, 1, 2), [...s16, '-lpc_coeff_precision', '5']],
    [
      'exact Rice parameters, partition order 8',
      tones(44100, 1, 2),
      [...s16, '-exact_rice_parameters', '1', '-min_partition_order', '8', '-max_partition_order', '8'],
    ],
    ['block size 16', tones(44100, 0.2, 2), [...s16, '-frame_size', '16']],
    ['block size 65535', tones(44100, 3, 2), [...s16, '-frame_size', '65535']],
    ['silence (constant subframes)', 'anullsrc=r=48000:cl=stereo:d=2', s24],
    ['full-scale white noise (verbatim subframes)', 'anoisesrc=c=white:a=1:r=44100:d=1', s16],
    ['full-scale white noise 24-bit', 'anoisesrc=c=white:a=1:r=48000:d=1', s24],
    // 16-bit samples in a 24-bit file: 8 wasted bits per subframe (RFC 9639 section 9.2.2).
    ['16-bit content in a 24-bit file', `${tones(48000, 1, 2)},aformat=sample_fmts=s16`, s24],
    [
      '32-bit mono',
      'anoisesrc=c=pink:a=0.5:r=48000:d=1',
      ['-ac', '1', '-sample_fmt', 's32', '-bits_per_raw_sample', '32', '-strict', 'experimental'],
    ],
  ];

  it.each(cases)('%s', (name, source, args) => {
    expectSameAsReference(ffmpegEncode(`${name.replace(/\W+/g, '-')}.flac`, source, args));
  });

  it.skipIf(!hasSox)('block size 65535 24-bit, against sox (ffmpeg 5.1 decodes it to nothing)', () => {
    const path = ffmpegEncode('big24.flac', tones(44100, 3, 2), [...s24, '-frame_size', '65535']);
    expectSameAsReference(path, soxIntegers);
  });

  it.skipIf(!hasSox).each([
    ['16-bit', ['-b', '16'], []],
    ['24-bit', ['-b', '24'], []],
    ['8-bit', ['-b', '8'], []],
    ['20-bit mono', ['-b', '20', '-c', '1'], []],
    ['compression 0', ['-b', '16'], ['-C', '0']],
    ['compression 8', ['-b', '24'], ['-C', '8']],
  ])('sox-written FLAC %s', (name, format, options) => {
    const out = join(dir, `sox-${name.replace(/\W+/g, '-')}.flac`);
    execFileSync('sox', [
      ...['-n', '-r', '44100', '-c', '2'],
      ...format,
      ...options,
      out,
      ...['synth', '1.5', 'sine', '440', 'pinknoise', 'vol', '0.5'],
    ]);
    expectSameAsReference(out);
  });

  it('gives the samples the decoder package gave after requantization, bit for bit', async () => {
    const { decoder } = await import('@audio/decode-flac');
    for (const [name, args] of [
      ['pkg16.flac', s16],
      ['pkg24.flac', s24],
    ] as const) {
      const path = ffmpegEncode(name, tones(48000, 2, 2), [...args]);
      const bytes = new Uint8Array(readFileSync(path));
      const bits = streamInfo(bytes).bits;
      const pkg = await decoder();
      const a = await pkg.decode(bytes);
      const b = await pkg.flush();
      pkg.free();
      const d = await openAudioFileAs(path, 'flac', { maxBlockFrames: 1 << 20 });
      const blocks = [];
      for await (const block of d.blocks) blocks.push(block);
      expect(blocks.length).toBe(1);
      for (let c = 0; c < 2; c++) {
        const from = new Float32Array(a.channelData[c].length + (b.channelData[c]?.length ?? 0));
        from.set(a.channelData[c]);
        if (b.channelData[c]) from.set(b.channelData[c], a.channelData[c].length);
        const expected = new Float32Array(from.length);
        requantizeInto(expected, 0, from, 2 ** (bits - 1));
        expect(Buffer.compare(Buffer.from(blocks[0].channelData[c].slice().buffer), Buffer.from(expected.buffer))).toBe(
          0,
        );
      }
    }
  });

  describe('damaged input', () => {
    let clean: Uint8Array;
    const frameStarts = (b: Uint8Array): number[] => {
      const out: number[] = [];
      for (let o = 42; o + 1 < b.length; o++)
        if (frameHeaderBytes(b, o, b.length) > 0 && b[o + 4] === out.length) out.push(o);
      return out;
    };
    beforeAll(() => {
      clean = new Uint8Array(
        readFileSync(ffmpegEncode('clean.flac', tones(44100, 3, 2), [...s16, '-frame_size', '4096'])),
      );
    });

    it('a frame with a flipped bit is dropped and reported once; the frames after it decode', () => {
      const damaged = clean.slice();
      const starts = frameStarts(damaged);
      // A byte in the middle of the 5th frame: its CRC-16 (RFC 9639 section 9.3) no longer matches.
      damaged[Math.floor((starts[4] + starts[5]) / 2)] ^= 0x10;
      const whole = ours(clean, 1 << 20).ints;
      const { ints, errors } = ours(damaged, 1000);
      expect(errors).toHaveLength(1);
      expect(errors[0]).toMatch(/sample 16384/);
      expect(ints.length).toBe(whole.length - 4096 * 2);
      expect(ints.subarray(0, 16384 * 2)).toEqual(whole.subarray(0, 16384 * 2));
      expect(ints.subarray(16384 * 2)).toEqual(whole.subarray(20480 * 2));
    });

    it('a file cut inside a frame ends at the frame before, without an error', () => {
      const starts = frameStarts(clean);
      const { ints, errors } = ours(clean.subarray(0, starts[6] + 100), 777);
      expect(errors).toEqual([]);
      expect(ints.length).toBe(6 * 4096 * 2);
    });

    it('bytes after the last frame are reported once, at the end', () => {
      const junk = new Uint8Array(clean.length + 300);
      junk.set(clean);
      junk.fill(0x55, clean.length);
      const { ints, errors } = ours(junk, 4096);
      expect(ints.length).toBe(ours(clean, 4096).ints.length);
      expect(errors).toHaveLength(1);
    });

    it('an ID3v1 tag after the last frame is no damage', () => {
      const tagged = new Uint8Array(clean.length + 128);
      tagged.set(clean);
      tagged.set([0x54, 0x41, 0x47], clean.length);
      expect(ours(tagged, 4096).errors).toEqual([]);
    });

    it('the pipeline throws corrupt_file for a frame damaged inside the stream', async () => {
      const damaged = clean.slice();
      const starts = frameStarts(damaged);
      damaged[starts[3] + 40] ^= 0xff;
      const path = join(dir, 'damaged.flac');
      writeFileSync(path, damaged);
      const run = async () => {
        const d = await openAudioFileAs(path, 'flac');
        for await (const _ of d.blocks) void _;
      };
      await expect(run()).rejects.toBeInstanceOf(EarmarkError);
      await expect(run()).rejects.toMatchObject({ code: 'corrupt_file' });
    });
  });
});
