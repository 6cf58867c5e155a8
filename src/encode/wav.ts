// Small WAV / AIFF writers for tests, fixtures and benchmarks. Streams blocks to disk.
import { open } from 'node:fs/promises';
import { EarmarkError } from '../errors/index.ts';

export interface WavHeaderOptions {
  sampleRate: number;
  channels: number;
  bitsPerSample: number;
  float: boolean;
  frames: number;
  /** RF64 with a ds64 chunk (EBU Tech 3306) instead of plain RIFF. */
  rf64?: boolean;
  /** Writes WAVE_FORMAT_EXTENSIBLE with this dwChannelMask. */
  channelMask?: number;
  /** Adds a bext chunk (EBU Tech 3285, version 0) with this TimeReference. */
  timeReferenceSamples?: number;
  /** Adds a bext chunk of version 2 (EBU Tech 3285 v2) with these loudness fields; null or absent writes 0x7FFF (not set). */
  bextLoudness?: BextLoudnessFields;
  /** The bext Version field; default 2 with bextLoudness, else 0. */
  bextVersion?: number;
  /** Adds an iXML chunk with this text (UTF-8) before the data. */
  ixml?: string;
}

/** Values in LUFS, LU and dBTP; written x 100 as int16 (EBU Tech 3285 v2). */
export interface BextLoudnessFields {
  integratedLufs?: number | null;
  loudnessRangeLu?: number | null;
  maxTruePeakDbtp?: number | null;
  maxMomentaryLufs?: number | null;
  maxShortTermLufs?: number | null;
}

class ByteWriter {
  readonly bytes: Uint8Array;
  private readonly view: DataView;
  offset = 0;
  constructor(length: number) {
    this.bytes = new Uint8Array(length);
    this.view = new DataView(this.bytes.buffer);
  }
  id(text: string): void {
    for (let i = 0; i < 4; i++) this.bytes[this.offset + i] = text.charCodeAt(i);
    this.offset += 4;
  }
  u16(v: number, le: boolean): void {
    this.view.setUint16(this.offset, v, le);
    this.offset += 2;
  }
  i16le(v: number): void {
    this.view.setInt16(this.offset, v, true);
    this.offset += 2;
  }
  u32(v: number, le: boolean): void {
    this.view.setUint32(this.offset, v, le);
    this.offset += 4;
  }
  u64le(v: number): void {
    this.u32(v % 2 ** 32, true);
    this.u32(Math.floor(v / 2 ** 32), true);
  }
  skip(n: number): void {
    this.offset += n;
  }
}

const KSDATAFORMAT_TAIL = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];
const BEXT_BYTES = 602;

/** WAV header bytes up to and including the data chunk header. */
export function wavHeader(o: WavHeaderOptions): Uint8Array {
  const bytesPerSample = Math.ceil(o.bitsPerSample / 8);
  const blockAlign = o.channels * bytesPerSample;
  const dataBytes = o.frames * blockAlign;
  const extensible = o.channelMask !== undefined;
  const fmtBytes = extensible ? 40 : o.float ? 18 : 16;
  const hasBext = o.timeReferenceSamples !== undefined || o.bextLoudness !== undefined || o.bextVersion !== undefined;
  const bextBytes = hasBext ? 8 + BEXT_BYTES : 0;
  const ixml = o.ixml === undefined ? null : new TextEncoder().encode(o.ixml);
  const ixmlBytes = ixml ? 8 + ixml.length + (ixml.length % 2) : 0;
  const ds64Bytes = o.rf64 ? 8 + 28 : 0;
  const headerBytes = 12 + ds64Bytes + 8 + fmtBytes + bextBytes + ixmlBytes + 8;
  const riffBytes = headerBytes - 8 + dataBytes + (dataBytes % 2);
  if (!o.rf64 && riffBytes > 0xffffffff)
    throw new EarmarkError('invalid_argument', `${dataBytes} data bytes need RF64`);
  const w = new ByteWriter(headerBytes);
  w.id(o.rf64 ? 'RF64' : 'RIFF');
  w.u32(o.rf64 ? 0xffffffff : riffBytes, true);
  w.id('WAVE');
  if (o.rf64) {
    w.id('ds64');
    w.u32(28, true);
    w.u64le(riffBytes);
    w.u64le(dataBytes);
    w.u64le(o.frames);
    w.u32(0, true); // table length
  }
  w.id('fmt ');
  w.u32(fmtBytes, true);
  w.u16(extensible ? 0xfffe : o.float ? 3 : 1, true);
  w.u16(o.channels, true);
  w.u32(o.sampleRate, true);
  w.u32(o.sampleRate * blockAlign, true);
  w.u16(blockAlign, true);
  w.u16(bytesPerSample * 8, true);
  if (fmtBytes > 16) w.u16(fmtBytes - 18, true);
  if (extensible) {
    w.u16(o.bitsPerSample, true);
    w.u32(o.channelMask ?? 0, true);
    w.u16(o.float ? 3 : 1, true);
    for (const b of KSDATAFORMAT_TAIL) w.bytes[w.offset++] = b;
  }
  if (hasBext) {
    w.id('bext');
    w.u32(BEXT_BYTES, true);
    w.skip(338); // Description, Originator, OriginatorReference, OriginationDate, OriginationTime
    w.u64le(o.timeReferenceSamples ?? 0);
    w.u16(o.bextVersion ?? (o.bextLoudness ? 2 : 0), true);
    w.skip(64); // UMID
    const l = o.bextLoudness ?? {};
    for (const v of [l.integratedLufs, l.loudnessRangeLu, l.maxTruePeakDbtp, l.maxMomentaryLufs, l.maxShortTermLufs])
      w.i16le(v === null || v === undefined ? 0x7fff : Math.round(v * 100));
    w.skip(BEXT_BYTES - 422); // Reserved, no CodingHistory
  }
  if (ixml) {
    w.id('iXML');
    w.u32(ixml.length, true);
    w.bytes.set(ixml, w.offset);
    w.skip(ixml.length + (ixml.length % 2));
  }
  w.id('data');
  w.u32(o.rf64 ? 0xffffffff : dataBytes, true);
  return w.bytes;
}

export interface SampleEncoding {
  /** Default false (WAV). */
  bigEndian?: boolean;
  /** 8-bit samples signed (AIFF) instead of offset-binary (WAV). Default false. */
  signed8?: boolean;
}

/** Interleaves planar samples; integers are clamped to full scale and rounded to nearest. */
export function encodePcmFrames(
  channelData: Float32Array[] | Float64Array[],
  bitsPerSample: number,
  float: boolean,
  encoding: SampleEncoding = {},
): Uint8Array {
  const channels = channelData.length;
  const frames = channels > 0 ? channelData[0].length : 0;
  const bytesPerSample = Math.ceil(bitsPerSample / 8);
  const out = new Uint8Array(frames * channels * bytesPerSample);
  const view = new DataView(out.buffer);
  const le = !encoding.bigEndian;
  const scale = 2 ** (bytesPerSample * 8 - 1);
  for (let f = 0, o = 0; f < frames; f++) {
    for (let c = 0; c < channels; c++, o += bytesPerSample) {
      const x = channelData[c][f];
      if (float) {
        if (bytesPerSample === 4) view.setFloat32(o, x, le);
        else view.setFloat64(o, x, le);
        continue;
      }
      const v = Math.max(-scale, Math.min(scale - 1, Math.round(x * scale)));
      if (bytesPerSample === 1) out[o] = encoding.signed8 ? v & 0xff : v + 128;
      else if (bytesPerSample === 2) view.setInt16(o, v, le);
      else if (bytesPerSample === 4) view.setInt32(o, v, le);
      else {
        const u = v & 0xffffff;
        out[o + (le ? 0 : 2)] = u & 0xff;
        out[o + 1] = (u >> 8) & 0xff;
        out[o + (le ? 2 : 0)] = u >> 16;
      }
    }
  }
  return out;
}

export type PlanarBlocks = AsyncIterable<Float32Array[] | Float64Array[]> | Iterable<Float32Array[] | Float64Array[]>;

/** Writes header + encoded blocks, then rewrites the header with the real frame count. */
async function writeFile(
  path: string,
  header: (frames: number) => Uint8Array,
  encode: (block: Float32Array[] | Float64Array[]) => Uint8Array,
  blocks: PlanarBlocks,
  padOddData: boolean,
): Promise<number> {
  const handle = await open(path, 'w');
  try {
    let position = header(0).length;
    let frames = 0;
    for await (const block of blocks) {
      const bytes = encode(block);
      await handle.write(bytes, 0, bytes.length, position);
      position += bytes.length;
      frames += block[0]?.length ?? 0;
    }
    const head = header(frames);
    const dataBytes = position - head.length;
    if (padOddData && dataBytes % 2 === 1) await handle.write(new Uint8Array(1), 0, 1, position);
    await handle.write(head, 0, head.length, 0);
    return frames;
  } finally {
    await handle.close();
  }
}

/** Streams planar blocks into a WAV file; `frames` in options is ignored (counted). Returns frames written. */
export function writeWavFile(
  path: string,
  options: Omit<WavHeaderOptions, 'frames'>,
  blocks: PlanarBlocks,
): Promise<number> {
  return writeFile(
    path,
    (frames) => wavHeader({ ...options, frames }),
    (b) => encodePcmFrames(b, options.bitsPerSample, options.float),
    blocks,
    true,
  );
}

export interface AiffHeaderOptions {
  sampleRate: number;
  channels: number;
  bitsPerSample: number;
  frames: number;
  /** AIFF-C compression type; plain AIFF when absent. */
  compression?: 'NONE' | 'sowt' | 'fl32' | 'fl64';
}

/** 80-bit IEEE extended for the AIFF COMM sample rate (positive finite values). */
export function extended80(value: number): Uint8Array {
  const out = new Uint8Array(10);
  if (value === 0) return out;
  let exponent = Math.floor(Math.log2(value));
  let m = value / 2 ** exponent;
  if (m >= 2) {
    m /= 2;
    exponent++;
  } // log2 rounding at exact powers
  if (m < 1) {
    m *= 2;
    exponent--;
  }
  const biased = exponent + 16383;
  out[0] = (biased >> 8) & 0x7f;
  out[1] = biased & 0xff;
  const hi = Math.floor(m * 2 ** 31);
  const lo = (m * 2 ** 31 - hi) * 2 ** 32;
  const view = new DataView(out.buffer);
  view.setUint32(2, hi);
  view.setUint32(6, lo);
  return out;
}

/** FORM header up to the first sample of SSND (offset 0, blockSize 0). */
export function aiffHeader(o: AiffHeaderOptions): Uint8Array {
  const aifc = o.compression !== undefined;
  const float = o.compression === 'fl32' || o.compression === 'fl64';
  const bytesPerSample = o.compression === 'fl64' ? 8 : o.compression === 'fl32' ? 4 : Math.ceil(o.bitsPerSample / 8);
  const dataBytes = o.frames * o.channels * bytesPerSample;
  const commBytes = aifc ? 18 + 4 + 2 : 18; // compression type + empty pascal string (count + pad)
  const fverBytes = aifc ? 8 + 4 : 0;
  const headerBytes = 12 + fverBytes + 8 + commBytes + 8 + 8;
  const w = new ByteWriter(headerBytes);
  w.id('FORM');
  w.u32(headerBytes - 8 + dataBytes + (dataBytes % 2), false);
  w.id(aifc ? 'AIFC' : 'AIFF');
  if (aifc) {
    w.id('FVER');
    w.u32(4, false);
    w.u32(0xa2805140, false); // AIFF-C version 1 timestamp
  }
  w.id('COMM');
  w.u32(commBytes, false);
  w.u16(o.channels, false);
  w.u32(o.frames, false);
  w.u16(float ? bytesPerSample * 8 : o.bitsPerSample, false);
  w.bytes.set(extended80(o.sampleRate), w.offset);
  w.skip(10);
  if (aifc) {
    w.id(o.compression ?? 'NONE');
    w.skip(2);
  }
  w.id('SSND');
  w.u32(8 + dataBytes, false);
  w.skip(8);
  return w.bytes;
}

/** Streams planar blocks into an AIFF or AIFF-C file. Returns frames written. */
export function writeAiffFile(
  path: string,
  options: Omit<AiffHeaderOptions, 'frames'>,
  blocks: PlanarBlocks,
): Promise<number> {
  const float = options.compression === 'fl32' || options.compression === 'fl64';
  const bits = options.compression === 'fl64' ? 64 : options.compression === 'fl32' ? 32 : options.bitsPerSample;
  const encoding: SampleEncoding = { bigEndian: options.compression !== 'sowt', signed8: true };
  return writeFile(
    path,
    (frames) => aiffHeader({ ...options, frames }),
    (b) => encodePcmFrames(b, bits, float, encoding),
    blocks,
    true,
  );
}
