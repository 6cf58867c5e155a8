// RIFF/WAVE, RF64 and BW64 decoding. Layout facts cite their documents; ffmpeg and sox
// (Debian, /usr/bin) are the outside reference for real-world files.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readdirSync, rmSync, writeFileSync, existsSync } from 'node:fs';
import { truncate } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { openAudioFile, openPcmStream, type DecodedAudio } from '../../src/decode/index.ts';
import { convertInterleaved } from '../../src/decode/pcm/convert.ts';
import { encodePcmFrames, wavHeader, writeWavFile } from '../../src/encode/wav.ts';
import { EarmarkError } from '../../src/errors/index.ts';
import { hasTool } from '../helpers/tools.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-riff-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
let fileCounter = 0;
const tmpFile = (ext = 'wav'): string => join(dir, `f${fileCounter++}.${ext}`);

// ---- helpers: independent little byte builders (not the project's encoder) ----
const le16 = (v: number): number[] => [v & 0xff, (v >> 8) & 0xff];
const le32 = (v: number): number[] => [v & 0xff, (v >>> 8) & 0xff, (v >>> 16) & 0xff, (v >>> 24) & 0xff];
const le64 = (v: number): number[] => [...le32(v % 2 ** 32), ...le32(Math.floor(v / 2 ** 32))];
const id = (s: string): number[] => [...s].map((c) => c.charCodeAt(0));

/** A chunk: id, 32-bit LE size, body, pad byte when the size is odd (Microsoft RIFF: chunks are word aligned). */
function chunk(
  name: string,
  body: number[] | Uint8Array,
  { pad = true, size }: { pad?: boolean; size?: number } = {},
): number[] {
  const bytes = [...body];
  return [...id(name), ...le32(size ?? bytes.length), ...bytes, ...(pad && bytes.length % 2 ? [0] : [])];
}

/** WAVEFORMATEX (mmreg.h): tag, channels, rate, byte rate, block align, bits. */
function fmtBody(
  tag: number,
  channels: number,
  sampleRate: number,
  bits: number,
  blockAlign = channels * Math.ceil(bits / 8),
): number[] {
  return [
    ...le16(tag),
    ...le16(channels),
    ...le32(sampleRate),
    ...le32(sampleRate * blockAlign),
    ...le16(blockAlign),
    ...le16(bits),
  ];
}

/** WAVE_FORMAT_EXTENSIBLE (ksmedia.h): cbSize 22, valid bits, channel mask, sub-format GUID. */
function extensibleBody(
  channels: number,
  sampleRate: number,
  bits: number,
  mask: number,
  subTag = 1,
  guidTail = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71],
): number[] {
  return [
    ...fmtBody(0xfffe, channels, sampleRate, bits),
    ...le16(22),
    ...le16(bits),
    ...le32(mask),
    ...le16(subTag),
    ...guidTail,
  ];
}

function riff(chunks: number[][], form = 'RIFF'): Uint8Array {
  const body = chunks.flat();
  return new Uint8Array([...id(form), ...le32(form === 'RIFF' ? body.length + 4 : 0xffffffff), ...id('WAVE'), ...body]);
}

async function* streamOf(...parts: Uint8Array[]): AsyncGenerator<Uint8Array> {
  for (const p of parts) yield p;
}

async function collect(decoded: DecodedAudio): Promise<Float32Array[]> {
  const parts: Float32Array[][] = [];
  for await (const block of decoded.blocks) parts.push(block.channelData.map((c) => c.slice()));
  return Array.from({ length: decoded.format.channels }, (_, c) => {
    const out = new Float32Array(parts.reduce((n, p) => n + p[c].length, 0));
    let o = 0;
    for (const p of parts) {
      out.set(p[c], o);
      o += p[c].length;
    }
    return out;
  });
}

async function decodeBytes(bytes: Uint8Array): Promise<{ decoded: DecodedAudio; channels: Float32Array[] }> {
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

const openBytes = (bytes: Uint8Array): Promise<unknown> => decodeBytes(bytes);

/** Interleaved raw ffmpeg float output as planar arrays (ffmpeg -f f32le: native little-endian float). */
function ffmpegPlanar(path: string, channels: number): Float32Array[] {
  const raw = execFileSync('/usr/bin/ffmpeg', ['-v', 'error', '-i', path, '-f', 'f32le', '-c:a', 'pcm_f32le', '-'], {
    maxBuffer: 64 * 1024 * 1024,
  });
  const all = new Float32Array(raw.buffer, raw.byteOffset, raw.length / 4);
  return Array.from({ length: channels }, (_, c) => all.filter((_, i) => i % channels === c));
}

describe("PCM encodings round-trip exactly (Microsoft WAVE PCM: 8-bit unsigned offset 128, wider signed LE two's complement; from memory)", () => {
  it('8-bit unsigned: (x - 128) / 128', async () => {
    const data = [0, 1, 127, 128, 129, 255];
    const { channels, decoded } = await decodeBytes(riff([chunk('fmt ', fmtBody(1, 1, 8000, 8)), chunk('data', data)]));
    expect(decoded.format.encoding).toBe('pcm_u8');
    expect([...channels[0]]).toEqual(data.map((x) => (x - 128) / 128));
  });

  it('16-bit: x / 32768, stereo deinterleaved', async () => {
    const values = [-32768, 32767, -1, 1, 0, 12345];
    const data = values.flatMap(le16);
    const { channels, decoded } = await decodeBytes(
      riff([chunk('fmt ', fmtBody(1, 2, 48000, 16)), chunk('data', data)]),
    );
    expect(decoded.format).toMatchObject({
      encoding: 'pcm_s16le',
      sampleRate: 48000,
      channels: 2,
      frames: 3,
      bitsPerSample: 16,
      channelLabels: ['L', 'R'],
    });
    expect([...channels[0]]).toEqual([-32768, -1, 0].map((x) => x / 32768));
    expect([...channels[1]]).toEqual([32767, 1, 12345].map((x) => x / 32768));
  });

  it('24-bit: x / 8388608, odd frame counts and every channel count path', async () => {
    for (const channelCount of [1, 2, 3, 6]) {
      const frames = 7;
      const values = Array.from(
        { length: frames * channelCount },
        (_, i) => [-8388608, 8388607, -1, 1, 0, 4660, -300000][i % 7] + (i % 3) - (i % 7 === 1 ? 2 : 0),
      );
      const data = values.flatMap((v) => [v & 0xff, (v >> 8) & 0xff, (v >> 16) & 0xff]);
      const { channels } = await decodeBytes(
        riff([chunk('fmt ', fmtBody(1, channelCount, 48000, 24)), chunk('data', data)]),
      );
      for (let c = 0; c < channelCount; c++) {
        expect([...channels[c]]).toEqual(values.filter((_, i) => i % channelCount === c).map((x) => x / 8388608));
      }
    }
  });

  it('32-bit int: x / 2147483648 rounded to float32', async () => {
    const values = [-2147483648, 2147483647, -1, 1, 0, 123456789];
    const { channels } = await decodeBytes(
      riff([chunk('fmt ', fmtBody(1, 1, 48000, 32)), chunk('data', values.flatMap(le32))]),
    );
    expect([...channels[0]]).toEqual(values.map((x) => Math.fround(x / 2147483648)));
  });

  it('IEEE float 32 as is, float 64 rounded to float32 (format tag 3)', async () => {
    const values = [0.5, -1, 1.5, 1e-30, -0.25];
    const f32 = new Uint8Array(new Float32Array(values).buffer);
    const f64 = new Uint8Array(new Float64Array(values).buffer);
    const a = await decodeBytes(riff([chunk('fmt ', [...fmtBody(3, 1, 96000, 32), ...le16(0)]), chunk('data', f32)]));
    const b = await decodeBytes(riff([chunk('fmt ', [...fmtBody(3, 1, 96000, 64), ...le16(0)]), chunk('data', f64)]));
    expect(a.decoded.format.encoding).toBe('pcm_f32le');
    expect(b.decoded.format.encoding).toBe('pcm_f64le');
    expect([...a.channels[0]]).toEqual(values.map(Math.fround));
    expect([...b.channels[0]]).toEqual(values.map(Math.fround));
  });

  it('converts unaligned and big-endian input through the same paths', () => {
    const values = [-32768, 1, 32767, -2];
    const bytes = new Uint8Array(1 + values.length * 2);
    values.forEach((v, i) => {
      bytes[1 + 2 * i] = (v >> 8) & 0xff;
      bytes[2 + 2 * i] = v & 0xff;
    });
    const out = [new Float32Array(2), new Float32Array(2)];
    convertInterleaved(bytes.subarray(1), 2, 2, { kind: 'int', bytesPerSample: 2, bigEndian: true }, out, 0);
    expect([...out[0], ...out[1]]).toEqual([-32768, 32767, 1, -2].map((x) => x / 32768));
  });

  it('the project encoder writes what the decoder reads back, every format', async () => {
    for (const [bits, float] of [
      [8, false],
      [16, false],
      [24, false],
      [32, false],
      [32, true],
      [64, true],
    ] as const) {
      const step = float ? 0.125 : 2 / 2 ** bits;
      const left = Float32Array.from({ length: 64 }, (_, i) => -1 + i * step * 3);
      const right = Float32Array.from({ length: 64 }, (_, i) => 0.5 - i * step);
      const path = tmpFile();
      await writeWavFile(path, { sampleRate: 44100, channels: 2, bitsPerSample: bits, float }, [[left, right]]);
      const decoded = await openAudioFile(path);
      const [l, r] = await collect(decoded);
      expect([...l]).toEqual([...left]);
      expect([...r]).toEqual([...right]);
    }
  });
});

describe('WAVE_FORMAT_EXTENSIBLE (Microsoft ksmedia.h SPEAKER_* channel mask bits and KSDATAFORMAT_SUBTYPE GUIDs)', () => {
  const labelsFor = async (mask: number, channels: number): Promise<unknown> => {
    const { decoded } = await decodeBytes(
      riff([chunk('fmt ', extensibleBody(channels, 48000, 16, mask)), chunk('data', new Array(channels * 2).fill(0))]),
    );
    expect(decoded.format.channelMask).toBe(mask);
    return decoded.format.channelLabels;
  };
  it('5.1 back (0x3F) and 5.1 side (0x60F) both give Ls/Rs', async () => {
    expect(await labelsFor(0x3f, 6)).toEqual(['L', 'R', 'C', 'LFE', 'Ls', 'Rs']);
    expect(await labelsFor(0x60f, 6)).toEqual(['L', 'R', 'C', 'LFE', 'Ls', 'Rs']);
  });
  it('7.1 (0x63F): back pair rear, side pair side', async () => {
    expect(await labelsFor(0x63f, 8)).toEqual(['L', 'R', 'C', 'LFE', 'Lrs', 'Rrs', 'Lss', 'Rss']);
  });
  it('centre-only mono, top and centre positions, mask shorter than the channel count, zero mask', async () => {
    expect(await labelsFor(0x4, 1)).toEqual(['M']);
    expect(await labelsFor(0x1c0 | 0x800 | 0x3f000, 9)).toEqual([
      'Lc',
      'Rc',
      'Cs',
      'Tc',
      'Tfl',
      'Tfc',
      'Tfr',
      'Tbl',
      'Tbc',
    ]);
    expect(await labelsFor(0x3, 3)).toEqual(['L', 'R', 'unknown']);
    expect(await labelsFor(0, 2)).toEqual(['L', 'R']);
  });
  it('float sub-format GUID decodes float; 24-in-32 container uses the container width', async () => {
    const f = await decodeBytes(
      riff([
        chunk('fmt ', extensibleBody(1, 48000, 32, 0x4, 3)),
        chunk('data', new Uint8Array(new Float32Array([0.75]).buffer)),
      ]),
    );
    expect(f.channels[0][0]).toBe(0.75);
    const body = extensibleBody(1, 48000, 32, 0x4);
    body.splice(18, 2, ...le16(24)); // wValidBitsPerSample 24 in a 32-bit container
    const v = 0x123456 << 8;
    const i = await decodeBytes(riff([chunk('fmt ', body), chunk('data', le32(v))]));
    expect(i.decoded.format.bitsPerSample).toBe(24);
    expect(i.channels[0][0]).toBe(0x123456 / 8388608);
  });
  it('unknown sub-format GUID is unsupported_encoding', async () => {
    const ambisonic = [0x21, 0x07, 0xd3, 0x11, 0x86, 0x44, 0xc8, 0xc1, 0xca, 0x00, 0x00, 0x00, 0x00, 0x00];
    await expectCode(
      openBytes(
        riff([chunk('fmt ', extensibleBody(4, 48000, 16, 0, 1, ambisonic)), chunk('data', new Array(8).fill(0))]),
      ),
      'unsupported_encoding',
    );
  });
});

describe('RF64 / BW64 (EBU Tech 3306 ds64 chunk; ITU-R BS.2088 BW64 uses the same ds64)', () => {
  const ds64 = (riffBytes: number, dataBytes: number, frames: number): number[] =>
    chunk('ds64', [...le64(riffBytes), ...le64(dataBytes), ...le64(frames), ...le32(0)]);

  it('small RF64 and BW64 files use the ds64 data size', async () => {
    for (const form of ['RF64', 'BW64']) {
      const bytes = riff(
        [
          ds64(100, 8, 2),
          chunk('fmt ', fmtBody(1, 2, 48000, 16)),
          chunk('data', [...le16(1), ...le16(2), ...le16(3), ...le16(4)], { size: 0xffffffff }),
        ],
        form,
      );
      const { decoded, channels } = await decodeBytes(bytes);
      expect(decoded.format.container).toBe(form.toLowerCase());
      expect(decoded.format.frames).toBe(2);
      expect([...channels[1]]).toEqual([2 / 32768, 4 / 32768]);
    }
  });

  it('data over 4 GiB declared in ds64, stream cut short: frames from ds64, truncated_data at the cut', async () => {
    const dataBytes = 5 * 2 ** 30; // 5 GiB of stereo 16-bit
    const header = riff(
      [ds64(dataBytes + 72, dataBytes, dataBytes / 4), chunk('fmt ', fmtBody(1, 2, 48000, 16))],
      'RF64',
    );
    const dataHeader = new Uint8Array([...id('data'), ...le32(0xffffffff)]);
    const present = new Uint8Array(10_001 * 4 + 3); // 10001 frames and a partial frame
    const decoded = await openPcmStream(streamOf(header, dataHeader, present));
    expect(decoded.format.frames).toBe(dataBytes / 4);
    expect(decoded.format.frames).toBeGreaterThan(2 ** 32 / 4);
    await collect(decoded);
    expect(decoded.framesDecoded).toBe(10_001);
    expect(decoded.warnings).toEqual([expect.objectContaining({ code: 'truncated_data', atFrame: 10_001 })]);
  });

  it('a sparse 4.5 GiB RF64 file opens, streams its first block and closes on early exit', async () => {
    const path = tmpFile();
    const frames = Math.floor((4.5 * 2 ** 30) / 4);
    writeFileSync(
      path,
      wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: 16, float: false, frames, rf64: true }),
    );
    await truncate(path, 4.5 * 2 ** 30 + 80);
    const fds = (): number => (existsSync('/proc/self/fd') ? readdirSync('/proc/self/fd').length : 0);
    const before = fds();
    const decoded = await openAudioFile(path);
    expect(decoded.format.frames).toBe(frames);
    let blocks = 0;
    for await (const block of decoded.blocks) {
      expect(block.frames).toBe(65536);
      if (++blocks === 2) break;
    }
    expect(fds()).toBe(before);
    rmSync(path);
  });

  it('ffmpeg -rf64 always output decodes like ffmpeg decodes it', async () => {
    const path = tmpFile();
    execFileSync('/usr/bin/ffmpeg', [
      '-v',
      'error',
      '-f',
      'lavfi',
      '-i',
      'sine=frequency=997:sample_rate=48000:duration=0.2',
      '-ac',
      '2',
      '-c:a',
      'pcm_s24le',
      '-rf64',
      'always',
      path,
    ]);
    const decoded = await openAudioFile(path);
    expect(decoded.format.container).toBe('rf64');
    expect(await collect(decoded)).toEqual(ffmpegPlanar(path, 2));
  });

  it('RF64 without ds64 is corrupt_file', async () => {
    await expectCode(
      openBytes(riff([chunk('fmt ', fmtBody(1, 1, 48000, 16)), chunk('data', [0, 0], { size: 0xffffffff })], 'RF64')),
      'corrupt_file',
      /ds64/,
    );
  });
});

describe('BWF bext (EBU Tech 3285: TimeReference low/high at byte 338 of the chunk body)', () => {
  it('reads a 64-bit TimeReference written by the project encoder', async () => {
    const timeReferenceSamples = 86_399 * 192_000 + 17; // past 2^32, so the high word matters
    const path = tmpFile();
    await writeWavFile(
      path,
      { sampleRate: 192000, channels: 1, bitsPerSample: 24, float: false, timeReferenceSamples },
      [[new Float32Array(10)]],
    );
    expect((await openAudioFile(path)).format.timeReferenceSamples).toBe(timeReferenceSamples);
  });
  it('reads the TimeReference ffmpeg writes with -write_bext 1', async () => {
    const path = tmpFile();
    execFileSync('/usr/bin/ffmpeg', [
      '-v',
      'error',
      '-f',
      'lavfi',
      '-i',
      'anullsrc=r=48000:cl=mono',
      '-t',
      '0.05',
      '-c:a',
      'pcm_s16le',
      '-write_bext',
      '1',
      '-metadata',
      'time_reference=1728000000',
      path,
    ]);
    const decoded = await openAudioFile(path);
    expect(decoded.format.timeReferenceSamples).toBe(1_728_000_000);
    expect(decoded.format.frames).toBe(2400);
  });
  it('finds a bext chunk placed after the data in a file, none without bext', async () => {
    const body = new Array(602).fill(0);
    body.splice(338, 8, ...le64(48000 * 3600));
    const { decoded } = await decodeBytes(
      riff([chunk('fmt ', fmtBody(1, 1, 48000, 16)), chunk('data', [1, 0, 2]), chunk('bext', body)]),
    );
    expect(decoded.format.timeReferenceSamples).toBe(48000 * 3600);
    const plain = await decodeBytes(riff([chunk('fmt ', fmtBody(1, 1, 48000, 16)), chunk('data', [1, 0])]));
    expect(plain.decoded.format.timeReferenceSamples).toBeNull();
  });
});

describe('chunk walking (Microsoft RIFF: unknown chunks skipped, odd sizes padded to even)', () => {
  const pcm = [...le16(100), ...le16(-100)];
  it('unknown and odd-sized chunks before fmt and data', async () => {
    const bytes = riff([
      chunk('JUNK', [1, 2, 3]),
      chunk('zzzz', [9]),
      chunk('fmt ', fmtBody(1, 1, 44100, 16)),
      chunk('LIST', [1, 2, 3, 4, 5]),
      chunk('data', pcm),
    ]);
    const { channels, decoded } = await decodeBytes(bytes);
    expect([...channels[0]]).toEqual([100 / 32768, -100 / 32768]);
    expect(decoded.warnings).toEqual([]);
  });
  it('missing pad byte before data: samples right, odd_chunk_padding_missing warning', async () => {
    const bytes = riff([
      chunk('fmt ', fmtBody(1, 1, 44100, 16)),
      chunk('abcd', [7, 7, 7], { pad: false }),
      chunk('data', pcm),
    ]);
    const { channels, decoded } = await decodeBytes(bytes);
    expect([...channels[0]]).toEqual([100 / 32768, -100 / 32768]);
    expect(decoded.warnings.map((w) => w.code)).toEqual(['odd_chunk_padding_missing']);
  });
  it('odd-sized data chunk: frames from whole block-aligned bytes', async () => {
    const { decoded, channels } = await decodeBytes(
      riff([chunk('fmt ', fmtBody(1, 1, 44100, 16)), chunk('data', [...pcm, 5])]),
    );
    expect(decoded.format.frames).toBe(2);
    expect(channels[0].length).toBe(2);
  });
  it('data before fmt is corrupt_file; no data, no fmt, cut header are corrupt_file', async () => {
    await expectCode(
      openBytes(riff([chunk('data', pcm), chunk('fmt ', fmtBody(1, 1, 44100, 16))])),
      'corrupt_file',
      /before the fmt/,
    );
    await expectCode(openBytes(riff([chunk('fmt ', fmtBody(1, 1, 44100, 16))])), 'corrupt_file', /no data/);
    await expectCode(openBytes(riff([chunk('LIST', [1, 2])])), 'corrupt_file', /no fmt/);
    await expectCode(openBytes(riff([chunk('fmt ', fmtBody(1, 1, 44100, 16)).slice(0, 12)])), 'corrupt_file');
  });
});

describe('truncation policy', () => {
  it('data larger than the file: decode what is there, drop the partial frame, warn with atFrame', async () => {
    const bytes = riff([
      chunk('fmt ', fmtBody(1, 2, 48000, 24)),
      [...id('data'), ...le32(6 * 1000), ...new Array(6 * 500 + 4).fill(0)],
    ]);
    const { decoded, channels } = await decodeBytes(bytes);
    expect(decoded.format.frames).toBe(1000);
    expect(channels[0].length).toBe(500);
    expect(decoded.framesDecoded).toBe(500);
    expect(decoded.warnings).toEqual([expect.objectContaining({ code: 'truncated_data', atFrame: 500 })]);
  });
});

describe('malformed headers are typed errors', () => {
  const data = chunk('data', [0, 0, 0, 0]);
  const cases: [string, number[], string][] = [
    ['0 channels', fmtBody(1, 0, 48000, 16, 2), 'corrupt_file'],
    ['0 Hz', fmtBody(1, 1, 0, 16), 'corrupt_file'],
    ['2 MHz', fmtBody(1, 1, 2_000_000, 16), 'corrupt_file'],
    ['65 channels', fmtBody(1, 65, 48000, 16), 'corrupt_file'],
    ['bits vs block align', fmtBody(1, 2, 48000, 24, 4), 'corrupt_file'],
    ['0 bits', fmtBody(1, 1, 48000, 0, 2), 'corrupt_file'],
    ['short fmt', fmtBody(1, 1, 48000, 16).slice(0, 10), 'corrupt_file'],
    ['MS ADPCM (tag 2)', fmtBody(2, 1, 48000, 4, 256), 'unsupported_encoding'],
    ['A-law (tag 6)', fmtBody(6, 1, 8000, 8), 'unsupported_encoding'],
    ['mu-law (tag 7)', fmtBody(7, 1, 8000, 8), 'unsupported_encoding'],
    ['16-bit float', fmtBody(3, 1, 48000, 16), 'unsupported_encoding'],
    ['40-bit PCM', fmtBody(1, 1, 48000, 40), 'unsupported_encoding'],
  ];
  for (const [name, fmt, code] of cases) {
    it(`${name} -> ${code}`, async () => {
      await expectCode(openBytes(riff([chunk('fmt ', fmt), data])), code);
    });
  }
  it('missing, empty, directory and random files', async () => {
    await expectCode(openAudioFile(join(dir, 'nope.wav')), 'file_not_found');
    await expectCode(openAudioFile(dir), 'file_not_found');
    const empty = tmpFile();
    writeFileSync(empty, '');
    await expectCode(openAudioFile(empty), 'empty_file');
    let seed = 12345;
    const random = Uint8Array.from({ length: 5000 }, () => ((seed = (seed * 1103515245 + 12345) >>> 0) >>> 16) & 0xff);
    const path = tmpFile('bin');
    writeFileSync(path, random);
    await expectCode(openAudioFile(path), 'unsupported_format');
  });
  it('maxBlockFrames must be a positive integer', async () => {
    const path = tmpFile();
    writeFileSync(path, riff([chunk('fmt ', fmtBody(1, 1, 48000, 16)), data]));
    await expectCode(openAudioFile(path, { maxBlockFrames: 0 }), 'invalid_argument');
  });
});

describe('files from other writers decode to the samples ffmpeg decodes', () => {
  const codecs = ['pcm_u8', 'pcm_s16le', 'pcm_s24le', 'pcm_s32le', 'pcm_f32le', 'pcm_f64le'];
  for (const codec of codecs) {
    it(`ffmpeg ${codec} stereo and 5.1 (extensible)`, async () => {
      for (const layout of ['stereo', '5.1']) {
        const path = tmpFile();
        execFileSync('/usr/bin/ffmpeg', [
          '-v',
          'error',
          '-f',
          'lavfi',
          '-i',
          'sine=frequency=1000:sample_rate=48000:duration=0.3',
          '-af',
          `volume=0.9,aformat=channel_layouts=${layout}`,
          '-c:a',
          codec,
          path,
        ]);
        const channels = layout === 'stereo' ? 2 : 6;
        const decoded = await openAudioFile(path);
        expect(decoded.format.channels).toBe(channels);
        if (layout === '5.1') expect(decoded.format.channelLabels).toEqual(['L', 'R', 'C', 'LFE', 'Ls', 'Rs']);
        expect(await collect(decoded)).toEqual(ffmpegPlanar(path, channels));
      }
    });
  }
  it.runIf(hasTool('sox'))('sox 16/24/32-bit and float WAVs', async () => {
    for (const args of [
      ['-b', '16'],
      ['-b', '24'],
      ['-b', '32'],
      ['-e', 'floating-point', '-b', '32'],
    ]) {
      const path = tmpFile();
      execFileSync('/usr/bin/sox', [
        '-n',
        '-r',
        '44100',
        '-c',
        '2',
        ...args,
        path,
        'synth',
        '0.1',
        'sine',
        '1000',
        'gain',
        '-1',
      ]);
      const decoded = await openAudioFile(path);
      expect(decoded.format.sampleRate).toBe(44100);
      expect(decoded.format.frames).toBe(4410);
      expect(await collect(decoded)).toEqual(ffmpegPlanar(path, 2));
    }
  });
});

describe('streaming bounds', () => {
  it('blocks never exceed maxBlockFrames and add up to the declared frames', async () => {
    const frames = 4500;
    const samples = Float32Array.from({ length: frames }, (_, i) => ((i % 200) - 100) / 128);
    const path = tmpFile();
    await writeWavFile(path, { sampleRate: 48000, channels: 1, bitsPerSample: 16, float: false }, [[samples]]);
    const decoded = await openAudioFile(path, { maxBlockFrames: 1000 });
    const sizes: number[] = [];
    for await (const block of decoded.blocks) {
      sizes.push(block.frames);
      expect(block.channelData[0].length).toBe(block.frames);
    }
    expect(sizes).toEqual([1000, 1000, 1000, 1000, 500]);
    expect(decoded.framesDecoded).toBe(frames);
  });

  it('30 minutes of stereo 24-bit through a synthetic stream keeps memory flat', async () => {
    const sampleRate = 48000;
    const frames = 30 * 60 * sampleRate;
    const header = wavHeader({ sampleRate, channels: 2, bitsPerSample: 24, float: false, frames });
    const chunkFrames = 40_000;
    const body = encodePcmFrames(
      [Float32Array.from({ length: chunkFrames }, (_, i) => Math.sin(i / 10) * 0.5), new Float32Array(chunkFrames)],
      24,
      false,
    );
    async function* source(): AsyncGenerator<Uint8Array> {
      yield header;
      for (let done = 0; done < frames; done += chunkFrames)
        yield body.subarray(0, Math.min(chunkFrames, frames - done) * 6);
    }
    const used = (): number => {
      const m = process.memoryUsage();
      return m.heapUsed + m.arrayBuffers;
    };
    const decoded = await openPcmStream(source());
    const baseline = used();
    let peak = baseline;
    let blocks = 0;
    for await (const block of decoded.blocks) {
      if (++blocks % 64 === 0) peak = Math.max(peak, used());
      expect(block.frames).toBeLessThanOrEqual(65536);
    }
    expect(decoded.framesDecoded).toBe(frames);
    expect(decoded.warnings).toEqual([]);
    // 518 MB of PCM went through; growth stays far below it (GC slack for fresh blocks included).
    expect(peak - baseline).toBeLessThan(96 * 1024 * 1024);
  });

  it('stopping early closes the file handle', async () => {
    const path = tmpFile();
    await writeWavFile(path, { sampleRate: 48000, channels: 1, bitsPerSample: 16, float: false }, [
      [new Float32Array(200_000)],
    ]);
    const fds = (): number => readdirSync('/proc/self/fd').length;
    const before = fds();
    const decoded = await openAudioFile(path);
    expect(fds()).toBe(before); // nothing held before iteration
    for await (const _ of decoded.blocks) {
      expect(fds()).toBe(before + 1);
      break;
    }
    expect(fds()).toBe(before);
  });
});
