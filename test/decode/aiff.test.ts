// AIFF / AIFF-C decoding. Layout from Apple "Audio Interchange File Format" 1.3 and the AIFF-C
// draft (1991); sox and ffmpeg (Debian, /usr/bin) are the outside reference for real files.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { readExtended80 } from '../../src/decode/aiff.ts';
import { openAudioFile, openPcmStream, type DecodedAudio } from '../../src/decode/index.ts';
import { extended80, writeAiffFile } from '../../src/encode/wav.ts';
import { EarmarkError } from '../../src/errors/index.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-aiff-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
let counter = 0;
const tmpFile = (): string => join(dir, `f${counter++}.aiff`);

const be16 = (v: number): number[] => [(v >> 8) & 0xff, v & 0xff];
const be32 = (v: number): number[] => [(v >>> 24) & 0xff, (v >>> 16) & 0xff, (v >>> 8) & 0xff, v & 0xff];
const id = (s: string): number[] => [...s].map((c) => c.charCodeAt(0));
const chunk = (name: string, body: number[]): number[] => [
  ...id(name),
  ...be32(body.length),
  ...body,
  ...(body.length % 2 ? [0] : []),
];

// 80-bit extended bytes for common rates: Apple AIFF 1.3 sample files and common practice (from memory).
const RATE_44100 = [0x40, 0x0e, 0xac, 0x44, 0, 0, 0, 0, 0, 0];
const RATE_48000 = [0x40, 0x0e, 0xbb, 0x80, 0, 0, 0, 0, 0, 0];

/** COMM (AIFF 1.3 section "Common Chunk"): channels, frames, bits, 80-bit rate; AIFF-C adds type + pstring. */
const comm = (channels: number, frames: number, bits: number, rate = RATE_44100, compression?: string): number[] =>
  chunk('COMM', [
    ...be16(channels),
    ...be32(frames),
    ...be16(bits),
    ...rate,
    ...(compression ? [...id(compression), 0, 0] : []),
  ]);
const ssnd = (data: number[], offset = 0): number[] =>
  chunk('SSND', [...be32(offset), ...be32(0), ...new Array(offset).fill(0xee), ...data]);
const form = (type: 'AIFF' | 'AIFC', chunks: number[][]): Uint8Array => {
  const body = chunks.flat();
  return new Uint8Array([...id('FORM'), ...be32(body.length + 4), ...id(type), ...body]);
};

async function collect(decoded: DecodedAudio): Promise<Float32Array[]> {
  const parts: Float32Array[][] = [];
  for await (const block of decoded.blocks) parts.push(block.channelData.map((c) => c.slice()));
  return Array.from({ length: decoded.format.channels }, (_, c) => Float32Array.from(parts.flatMap((p) => [...p[c]])));
}

async function decode(bytes: Uint8Array): Promise<{ decoded: DecodedAudio; channels: Float32Array[] }> {
  const path = tmpFile();
  writeFileSync(path, bytes);
  const decoded = await openAudioFile(path);
  return { decoded, channels: await collect(decoded) };
}

async function expectCode(promise: Promise<unknown>, code: string, message?: RegExp): Promise<void> {
  const error = await promise.then(
    () => null,
    (e: unknown) => e,
  );
  expect(error).toBeInstanceOf(EarmarkError);
  expect((error as EarmarkError).code).toBe(code);
  if (message) expect((error as EarmarkError).message).toMatch(message);
}

function ffmpegPlanar(path: string, channels: number): Float32Array[] {
  const raw = execFileSync('/usr/bin/ffmpeg', ['-v', 'error', '-i', path, '-f', 'f32le', '-c:a', 'pcm_f32le', '-'], {
    maxBuffer: 64 * 1024 * 1024,
  });
  const all = new Float32Array(raw.buffer, raw.byteOffset, raw.length / 4);
  return Array.from({ length: channels }, (_, c) => all.filter((_, i) => i % channels === c));
}

describe('80-bit IEEE 754 extended sample rate (Apple AIFF 1.3 / IEEE 754 double-extended layout)', () => {
  it('decodes known byte patterns', () => {
    expect(readExtended80(new Uint8Array(RATE_44100), 0)).toBe(44100);
    expect(readExtended80(new Uint8Array(RATE_48000), 0)).toBe(48000);
    expect(readExtended80(new Uint8Array([0x40, 0x0b, 0xfa, 0, 0, 0, 0, 0, 0, 0]), 0)).toBe(8000); // from memory
    expect(readExtended80(new Uint8Array([0x3f, 0xff, 0x80, 0, 0, 0, 0, 0, 0, 0]), 0)).toBe(1); // exponent = bias
    expect(readExtended80(new Uint8Array([0xbf, 0xff, 0x80, 0, 0, 0, 0, 0, 0, 0]), 0)).toBe(-1);
    expect(readExtended80(new Uint8Array([0x7f, 0xff, 0x80, 0, 0, 0, 0, 0, 0, 1]), 0)).toBeNaN();
    expect(readExtended80(new Uint8Array([0x7f, 0xff, 0x80, 0, 0, 0, 0, 0, 0, 0]), 0)).toBe(Infinity);
    expect(readExtended80(new Uint8Array(10), 0)).toBe(0);
  });
  it('round-trips the encoder for integer and fractional rates', () => {
    for (const rate of [
      1, 8000, 11025, 22050, 22254.545454545452, 44100, 48000, 88200, 96000, 176400, 192000, 352800, 384000, 705600,
      768000, 1536000,
    ]) {
      expect(readExtended80(extended80(rate), 0)).toBe(rate);
    }
    expect([...extended80(44100)]).toEqual(RATE_44100);
  });
  it('NaN, infinite, zero, negative, absurd and tiny rates in COMM are corrupt_file', async () => {
    const bad = [
      [0x7f, 0xff, 0xc0, 0, 0, 0, 0, 0, 0, 0],
      [0x7f, 0xff, 0x80, 0, 0, 0, 0, 0, 0, 0],
      new Array(10).fill(0),
      [0xc0, 0x0e, 0xac, 0x44, 0, 0, 0, 0, 0, 0],
      [...extended80(2_000_000)],
      [0x00, 0x01, 0x80, 0, 0, 0, 0, 0, 0, 0],
    ];
    for (const rate of bad)
      await expectCode(decode(form('AIFF', [comm(1, 1, 16, rate), ssnd([0, 0])])), 'corrupt_file', /sample rate/);
  });
});

describe("sample encodings (AIFF: big-endian signed two's complement, 8-bit signed; AIFF-C types)", () => {
  it('AIFF 8, 16, 24, 32-bit big-endian', async () => {
    const a8 = await decode(form('AIFF', [comm(1, 4, 8), ssnd([0x80, 0xff, 0x00, 0x7f])]));
    expect(a8.decoded.format.encoding).toBe('pcm_s8');
    expect([...a8.channels[0]]).toEqual([-128, -1, 0, 127].map((x) => x / 128));
    const a16 = await decode(
      form('AIFF', [comm(2, 2, 16), ssnd([...be16(-32768), ...be16(32767), ...be16(-1), ...be16(1)])]),
    );
    expect([...a16.channels[0]]).toEqual([-1, -1 / 32768]);
    expect([...a16.channels[1]]).toEqual([32767 / 32768, 1 / 32768]);
    const v24 = [-8388608, 8388607, -2, 70000, 5];
    const a24 = await decode(
      form('AIFF', [comm(1, 5, 24), ssnd(v24.flatMap((v) => [(v >> 16) & 0xff, (v >> 8) & 0xff, v & 0xff]))]),
    );
    expect(a24.decoded.format.encoding).toBe('pcm_s24be');
    expect([...a24.channels[0]]).toEqual(v24.map((x) => x / 8388608));
    const v32 = [-2147483648, 2147483647, 77];
    const a32 = await decode(form('AIFF', [comm(1, 3, 32), ssnd(v32.flatMap(be32))]));
    expect([...a32.channels[0]]).toEqual(v32.map((x) => Math.fround(x / 2147483648)));
  });
  it('12-bit samples are left-justified in 16-bit containers (AIFF 1.3 "Sound Data Chunk")', async () => {
    const { channels, decoded } = await decode(form('AIFF', [comm(1, 1, 12), ssnd(be16(0x7ff0))]));
    expect(decoded.format.bitsPerSample).toBe(12);
    expect(channels[0][0]).toBe(0x7ff0 / 32768);
  });
  it('AIFF-C NONE, twos, sowt, fl32, FL32, fl64, FL64', async () => {
    const pcm = [...be16(1000), ...be16(-1000)];
    for (const type of ['NONE', 'twos']) {
      const { channels } = await decode(form('AIFC', [comm(1, 2, 16, RATE_48000, type), ssnd(pcm)]));
      expect([...channels[0]]).toEqual([1000 / 32768, -1000 / 32768]);
    }
    const sowt = await decode(
      form('AIFC', [comm(1, 2, 24, RATE_48000, 'sowt'), ssnd([0x01, 0x02, 0x03, 0xff, 0xff, 0xff])]),
    );
    expect(sowt.decoded.format.encoding).toBe('pcm_s24le');
    expect([...sowt.channels[0]]).toEqual([0x030201 / 8388608, -1 / 8388608]);
    const values = [0.5, -0.125, 3];
    const f32 = new Uint8Array(12);
    const f64 = new Uint8Array(24);
    values.forEach((v, i) => {
      new DataView(f32.buffer).setFloat32(i * 4, v);
      new DataView(f64.buffer).setFloat64(i * 8, v);
    });
    for (const [type, bytes, bits] of [
      ['fl32', f32, 32],
      ['FL32', f32, 32],
      ['fl64', f64, 64],
      ['FL64', f64, 64],
    ] as const) {
      const { channels, decoded } = await decode(form('AIFC', [comm(1, 3, bits, RATE_48000, type), ssnd([...bytes])]));
      expect(decoded.format.encoding).toBe(`pcm_f${bits}be`);
      expect([...channels[0]]).toEqual(values);
    }
  });
  it('other AIFF-C types (ulaw, alaw, ima4) are unsupported_encoding', async () => {
    for (const type of ['ulaw', 'alaw', 'ima4']) {
      await expectCode(
        decode(form('AIFC', [comm(1, 2, 16, RATE_48000, type), ssnd([0, 0])])),
        'unsupported_encoding',
        new RegExp(type),
      );
    }
  });
  it('project writer round-trips AIFF and AIFF-C sowt/fl32', async () => {
    const left = Float32Array.from({ length: 300 }, (_, i) => ((i % 200) - 100) / 128);
    for (const [bits, compression] of [
      [8, undefined],
      [16, undefined],
      [24, undefined],
      [16, 'sowt'],
      [24, 'sowt'],
      [32, 'fl32'],
      [64, 'fl64'],
    ] as const) {
      const path = tmpFile();
      await writeAiffFile(path, { sampleRate: 96000, channels: 1, bitsPerSample: bits, compression }, [[left]]);
      const decoded = await openAudioFile(path);
      expect(decoded.format.sampleRate).toBe(96000);
      expect([...(await collect(decoded))[0]]).toEqual([...left]);
    }
  });
});

describe('chunk structure', () => {
  const pcm = [...be16(5), ...be16(-5)];
  it('SSND offset skips leading bytes; unknown and odd chunks are skipped', async () => {
    const { channels } = await decode(
      form('AIFF', [chunk('ANNO', [1, 2, 3]), comm(1, 2, 16), chunk('MARK', [0, 0]), ssnd(pcm, 6)]),
    );
    expect([...channels[0]]).toEqual([5 / 32768, -5 / 32768]);
  });
  it('SSND before COMM works in a file, is corrupt_file from a stream', async () => {
    const bytes = form('AIFF', [ssnd(pcm), comm(1, 2, 16)]);
    const { channels } = await decode(bytes);
    expect([...channels[0]]).toEqual([5 / 32768, -5 / 32768]);
    async function* once(): AsyncGenerator<Uint8Array> {
      yield bytes;
    }
    await expectCode(openPcmStream(once()), 'corrupt_file', /SSND comes before COMM/);
  });
  it('truncated sound data: truncated_data with atFrame; SSND shorter than COMM declares: truncated_data where it ends', async () => {
    const cut = form('AIFF', [comm(2, 1000, 16)]);
    const withData = new Uint8Array([
      ...cut,
      ...id('SSND'),
      ...be32(8 + 4000),
      ...be32(0),
      ...be32(0),
      ...new Array(4 * 300 + 2).fill(0),
    ]);
    const t = await decode(withData);
    expect(t.decoded.format.frames).toBe(1000);
    expect(t.decoded.framesDecoded).toBe(300);
    expect(t.decoded.warnings).toEqual([expect.objectContaining({ code: 'truncated_data', atFrame: 300 })]);
    const short = await decode(form('AIFF', [comm(1, 10, 16), ssnd(pcm)]));
    expect(short.decoded.format.frames).toBe(2);
    expect(short.decoded.warnings).toEqual([expect.objectContaining({ code: 'truncated_data', atFrame: 2 })]);
  });
  it('missing COMM, missing SSND, 0 channels, 65 channels, 0 and 40-bit samples, cut COMM are corrupt_file', async () => {
    await expectCode(decode(form('AIFF', [ssnd(pcm)])), 'corrupt_file', /COMM/);
    await expectCode(decode(form('AIFF', [comm(1, 2, 16)])), 'corrupt_file', /SSND/);
    await expectCode(decode(form('AIFF', [comm(0, 2, 16), ssnd(pcm)])), 'corrupt_file', /0 channels/);
    await expectCode(decode(form('AIFF', [comm(65, 2, 16), ssnd(pcm)])), 'corrupt_file', /65 channels/);
    await expectCode(decode(form('AIFF', [comm(1, 2, 0), ssnd(pcm)])), 'corrupt_file');
    await expectCode(decode(form('AIFF', [comm(1, 2, 40), ssnd(pcm)])), 'corrupt_file');
    await expectCode(decode(form('AIFF', [comm(1, 2, 16)]).subarray(0, 24)), 'corrupt_file');
  });
  it('an empty AIFF (0 frames, no SSND) decodes to nothing', async () => {
    const { decoded, channels } = await decode(form('AIFF', [comm(2, 0, 16)]));
    expect(decoded.format.frames).toBe(0);
    expect(channels[0].length).toBe(0);
  });
});

describe('files from other writers', () => {
  it('sox AIFF (sox -n -r 44100 -c 2 -b 16 x.aiff synth 0.1 sine 1000): rate, frames and samples as ffmpeg decodes them', async () => {
    const path = tmpFile();
    execFileSync('/usr/bin/sox', ['-n', '-r', '44100', '-c', '2', '-b', '16', path, 'synth', '0.1', 'sine', '1000']);
    const decoded = await openAudioFile(path);
    expect(decoded.format).toMatchObject({
      container: 'aiff',
      sampleRate: 44100,
      channels: 2,
      frames: 4410,
      encoding: 'pcm_s16be',
    });
    expect(await collect(decoded)).toEqual(ffmpegPlanar(path, 2));
  });
  it('sox 24-bit AIFF-C NONE and ffmpeg AIFF-C sowt / fl32 / 24-bit AIFF', async () => {
    const soxPath = join(dir, 'sox.aifc');
    execFileSync('/usr/bin/sox', [
      '-n',
      '-r',
      '48000',
      '-c',
      '1',
      '-b',
      '24',
      '-t',
      'aifc',
      soxPath,
      'synth',
      '0.05',
      'sine',
      '440',
    ]);
    const sox = await openAudioFile(soxPath);
    expect(sox.format).toMatchObject({ container: 'aifc', sampleRate: 48000, encoding: 'pcm_s24be' });
    expect(await collect(sox)).toEqual(ffmpegPlanar(soxPath, 1));
    for (const codec of ['pcm_s16le', 'pcm_f32be', 'pcm_s24be', 'pcm_s32be']) {
      const path = tmpFile();
      execFileSync('/usr/bin/ffmpeg', [
        '-v',
        'error',
        '-f',
        'lavfi',
        '-i',
        'sine=frequency=300:sample_rate=22050:duration=0.1',
        '-ac',
        '2',
        '-c:a',
        codec,
        '-f',
        'aiff',
        path,
      ]);
      const decoded = await openAudioFile(path);
      expect(decoded.format.sampleRate).toBe(22050);
      expect(await collect(decoded)).toEqual(ffmpegPlanar(path, 2));
    }
  });
});
