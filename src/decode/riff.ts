// RIFF/WAVE, RF64 and BW64 reader, plus the PCM conversion and block streaming that aiff.ts
// shares, so both containers run through one hot loop.
import type { ChannelLabel, PcmBlock } from '../analysis/audio.ts';
import { defaultChannelLabels } from '../analysis/audio.ts';
import { EarmarkError } from '../errors/index.ts';
import { ByteReader } from './byte-reader.ts';
import type { AudioFormat, Container, DecodedAudio, DecodeOptions, DecodeWarning } from './types.ts';
import { DEFAULT_MAX_BLOCK_FRAMES, DEFAULT_MAX_DECODED_SECONDS } from './types.ts';
import { convertS24Stereo } from './kernels/s24-stereo.ts';

export const MAX_SAMPLE_RATE = 1_536_000;
/** K-weighting's 1.68 kHz shelf needs a Nyquist frequency above it; lower rates make the meters' filters unstable (NaN). */
export const MIN_SAMPLE_RATE = 4000;
export const MAX_CHANNELS = 64;

/** How one stored sample looks: integer (signed unless uint8), or IEEE float. */
export interface SampleLayout {
  kind: 'int' | 'uint8' | 'float';
  bytesPerSample: 1 | 2 | 3 | 4 | 8;
  bigEndian: boolean;
}

/** A parsed header: where the interleaved samples are and how to read them. */
export interface PcmPlan {
  format: AudioFormat;
  layout: SampleLayout;
  blockAlign: number;
  dataOffset: number;
  /** Declared sample bytes; may exceed what the file holds. */
  dataBytes: number;
  warnings: DecodeWarning[];
}

const hostLittleEndian = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
let alignedScratch = new ArrayBuffer(0);

/** Little-endian, 8-byte aligned view of `byteLength` bytes: `bytes` itself when possible, else a scratch copy. */
function littleEndianAligned(bytes: Uint8Array, byteLength: number, sampleBytes: number, bigEndian: boolean): Uint8Array {
  const swap = bigEndian === hostLittleEndian;
  if (!swap && bytes.byteOffset % 8 === 0) return bytes;
  if (alignedScratch.byteLength < byteLength) alignedScratch = new ArrayBuffer(byteLength);
  const dst = new Uint8Array(alignedScratch, 0, byteLength);
  if (!swap) dst.set(bytes.subarray(0, byteLength));
  else for (let i = 0; i < byteLength; i += sampleBytes) for (let k = 0; k < sampleBytes; k++) dst[i + k] = bytes[i + sampleBytes - 1 - k];
  return dst;
}

// One small function per view type keeps each loop monomorphic for the JIT.
function fromI16(src: Int16Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  const k = 1 / 32768;
  if (ch === 2) {
    const l = out[0], r = out[1];
    for (let f = 0, i = 0; f < frames; f++, i += 2) { l[o0 + f] = src[i] * k; r[o0 + f] = src[i + 1] * k; }
    return;
  }
  for (let c = 0; c < ch; c++) { const d = out[c]; for (let f = 0, i = c; f < frames; f++, i += ch) d[o0 + f] = src[i] * k; }
}

function fromI32(src: Int32Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  const k = 1 / 2147483648;
  for (let c = 0; c < ch; c++) { const d = out[c]; for (let f = 0, i = c; f < frames; f++, i += ch) d[o0 + f] = src[i] * k; }
}

function fromF32(src: Float32Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  if (ch === 1) { out[0].set(src.subarray(0, frames), o0); return; }
  for (let c = 0; c < ch; c++) { const d = out[c]; for (let f = 0, i = c; f < frames; f++, i += ch) d[o0 + f] = src[i]; }
}

function fromF64(src: Float64Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  for (let c = 0; c < ch; c++) { const d = out[c]; for (let f = 0, i = c; f < frames; f++, i += ch) d[o0 + f] = src[i]; }
}

/** Little-endian 24-bit from 32-bit words: 4 samples per 3 words, far fewer loads than byte access. */
function fromS24(b: Uint8Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  const k = 1 / 8388608;
  const samples = frames * ch;
  const groups = samples >> 2;
  const w = new Int32Array(b.buffer, b.byteOffset, groups * 3);
  if (ch === 2) {
    // Whole groups of four frames by the SIMD kernel; the rest (at most three frames) below.
    const l = out[0], r = out[1];
    const converted = convertS24Stereo(b, frames, l, r, o0);
    for (let g = converted / 2, f = o0 + converted, j = 3 * g; g < groups; g++, f += 2, j += 3) {
      const w0 = w[j], w1 = w[j + 1], w2 = w[j + 2];
      l[f] = ((w0 << 8) >> 8) * k;
      r[f] = ((((w0 >>> 24) | (w1 << 8)) << 8) >> 8) * k;
      l[f + 1] = ((((w1 >>> 16) | (w2 << 16)) << 8) >> 8) * k;
      r[f + 1] = (w2 >> 8) * k;
    }
  } else {
    let c = 0, f = o0;
    const put = (v: number): void => { out[c][f] = v * k; if (++c === ch) { c = 0; f++; } };
    for (let g = 0, j = 0; g < groups; g++, j += 3) {
      const w0 = w[j], w1 = w[j + 1], w2 = w[j + 2];
      put((w0 << 8) >> 8);
      put((((w0 >>> 24) | (w1 << 8)) << 8) >> 8);
      put((((w1 >>> 16) | (w2 << 16)) << 8) >> 8);
      put(w2 >> 8);
    }
  }
  for (let s = groups * 4; s < samples; s++) { // up to 3 leftover samples
    const i = s * 3;
    out[s % ch][o0 + Math.floor(s / ch)] = (((b[i + 2] << 24) | (b[i + 1] << 16) | (b[i] << 8)) >> 8) * k;
  }
}

/**
 * Deinterleaves `frames` frames from `bytes` into `out[c][outOffset...]` as float.
 * Integer scales are powers of two, so 8-24 bit results are exact.
 */
export function convertInterleaved(bytes: Uint8Array, frames: number, channels: number, layout: SampleLayout, out: readonly Float32Array[], outOffset: number): void {
  const bps = layout.bytesPerSample;
  if (bps === 1) {
    const k = 0.0078125; // 1/128
    for (let c = 0; c < channels; c++) {
      const d = out[c];
      if (layout.kind === 'uint8') for (let f = 0, i = c; f < frames; f++, i += channels) d[outOffset + f] = (bytes[i] - 128) * k;
      else for (let f = 0, i = c; f < frames; f++, i += channels) d[outOffset + f] = ((bytes[i] << 24) >> 24) * k;
    }
    return;
  }
  const byteLength = frames * channels * bps;
  const le = littleEndianAligned(bytes, byteLength, bps, layout.bigEndian);
  const count = frames * channels;
  if (bps === 3) return fromS24(le, channels, frames, out, outOffset);
  if (layout.kind === 'float') {
    if (bps === 4) return fromF32(new Float32Array(le.buffer, le.byteOffset, count), channels, frames, out, outOffset);
    return fromF64(new Float64Array(le.buffer, le.byteOffset, count), channels, frames, out, outOffset);
  }
  if (bps === 2) return fromI16(new Int16Array(le.buffer, le.byteOffset, count), channels, frames, out, outOffset);
  return fromI32(new Int32Array(le.buffer, le.byteOffset, count), channels, frames, out, outOffset);
}

/**
 * Streams a parsed plan as planar blocks. `openReader` is called on first iteration and must
 * return a reader positioned at plan.dataOffset; it is closed when iteration ends or stops.
 * The block's Float32Arrays are reused for the next block (saves a fifth of decode time in
 * allocation and GC): consumers read a block during push() and copy what they keep.
 */
export function streamPcm(plan: PcmPlan, openReader: () => Promise<ByteReader>, options: DecodeOptions = {}): DecodedAudio {
  const maxBlockFrames = options.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES;
  if (!Number.isInteger(maxBlockFrames) || maxBlockFrames < 1) {
    throw new EarmarkError('invalid_argument', `maxBlockFrames must be a positive integer, got ${maxBlockFrames}`, { field: 'maxBlockFrames' });
  }
  const { channels } = plan.format;
  const { blockAlign, layout } = plan;
  const warnings = [...plan.warnings];
  const declaredFrames = Math.floor(plan.dataBytes / blockAlign);
  const maxFrames = Math.floor((options.maxDecodedSeconds ?? DEFAULT_MAX_DECODED_SECONDS) * plan.format.sampleRate);
  if (!(maxFrames > 0)) throw new EarmarkError('invalid_argument', 'maxDecodedSeconds must be positive', { field: 'maxDecodedSeconds' });
  let framesDecoded = 0;

  async function* blocks(): AsyncGenerator<PcmBlock> {
    const reader = await openReader();
    try {
      const framesPerRead = Math.max(1, Math.floor(reader.capacityBytes / blockAlign));
      let framesLeft = declaredFrames;
      let ended = false;
      const buffers = Array.from({ length: channels }, () => new Float32Array(Math.min(maxBlockFrames, framesLeft)));
      while (framesLeft > 0 && !ended) {
        const blockFrames = Math.min(maxBlockFrames, framesLeft);
        const offered = options.blockArrays?.();
        const target = offered && offered.length === channels && offered[0].length >= blockFrames ? offered : buffers;
        const channelData = blockFrames === target[0].length ? target : target.map((a) => a.subarray(0, blockFrames));
        let filled = 0;
        while (filled < blockFrames) {
          const wantFrames = Math.min(blockFrames - filled, framesPerRead);
          const bytes = await reader.read(wantFrames * blockAlign);
          const gotFrames = Math.floor(bytes.length / blockAlign);
          convertInterleaved(bytes, gotFrames, channels, layout, channelData, filled);
          filled += gotFrames;
          if (gotFrames < wantFrames) {
            ended = true;
            const at = framesDecoded + filled;
            const partial = bytes.length % blockAlign;
            warnings.push({
              code: 'truncated_data',
              message: `audio data ends at frame ${at} of ${declaredFrames} declared${partial ? ` (partial last frame of ${partial} bytes dropped)` : ''}`,
              atFrame: at,
            });
            break;
          }
        }
        framesLeft -= filled;
        framesDecoded += filled;
        // Checked on frames read, not on the header's claim: a cut file that claims days is still read.
        if (framesDecoded > maxFrames) {
          throw new EarmarkError('decoded_size_exceeded', `decoded audio exceeds the cap of ${maxFrames} frames (${(maxFrames / plan.format.sampleRate).toFixed(0)} s)`,
            { atFrame: framesDecoded - filled, maxDecodedFrames: maxFrames });
        }
        if (filled > 0) yield { channelData: filled === channelData[0].length ? channelData : channelData.map((a) => a.subarray(0, filled)), frames: filled };
      }
    } finally {
      await reader.close();
    }
  }

  return {
    format: plan.format,
    blocks: blocks(),
    warnings,
    get framesDecoded() {
      return framesDecoded;
    },
  };
}

/** Validates the numbers every PCM header shares; throws corrupt_file on nonsense. */
export function checkStreamNumbers(what: string, channels: number, sampleRate: number): void {
  if (channels === 0) throw new EarmarkError('corrupt_file', `${what} declares 0 channels`);
  if (channels > MAX_CHANNELS) throw new EarmarkError('corrupt_file', `${what} declares ${channels} channels (more than ${MAX_CHANNELS})`);
  if (!Number.isFinite(sampleRate) || sampleRate < 1 || sampleRate > MAX_SAMPLE_RATE) {
    throw new EarmarkError('corrupt_file', `${what} declares an impossible sample rate of ${sampleRate} Hz`);
  }
  if (sampleRate < MIN_SAMPLE_RATE) throw new EarmarkError('unsupported_encoding', `${what} declares ${sampleRate} Hz; rates below ${MIN_SAMPLE_RATE} Hz are not supported`);
}

// ---- RIFF specifics ----

const u16 = (b: Uint8Array, o: number): number => b[o] | (b[o + 1] << 8);
const u32 = (b: Uint8Array, o: number): number => (b[o] | (b[o + 1] << 8) | (b[o + 2] << 16) | (b[o + 3] << 24)) >>> 0;
const u64 = (b: Uint8Array, o: number): number => u32(b, o) + u32(b, o + 4) * 2 ** 32;
export const fourcc = (b: Uint8Array, o: number): string => String.fromCharCode(b[o], b[o + 1], b[o + 2], b[o + 3]);

const WAVE_FORMAT_PCM = 0x0001;
const WAVE_FORMAT_IEEE_FLOAT = 0x0003;
const WAVE_FORMAT_EXTENSIBLE = 0xfffe;
// Microsoft mmreg.h format tags, named only so the error says what the file is.
const KNOWN_TAGS: Record<number, string> = {
  0x0002: 'Microsoft ADPCM', 0x0006: 'A-law', 0x0007: 'mu-law', 0x0011: 'IMA ADPCM', 0x0031: 'GSM 6.10',
  0x0050: 'MPEG audio', 0x0055: 'MPEG layer III', 0x00ff: 'AAC', 0x2000: 'AC-3', 0x2001: 'DTS',
};
// KSDATAFORMAT_SUBTYPE_* GUID bytes 2..15 as stored (little-endian Data1..Data3), ksmedia.h.
const KSDATAFORMAT_TAIL = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];

// dwChannelMask bit order (ksmedia.h SPEAKER_*): FL FR FC LFE BL BR FLC FRC BC SL SR TC TFL TFC TFR TBL TBC TBR.
const SPEAKER_BACK_PAIR = 0x30;
const SPEAKER_SIDE_PAIR = 0x600;

/** Labels for the first `channels` set bits of a WAVE_FORMAT_EXTENSIBLE mask; extra channels are 'unknown'. */
export function labelsFromChannelMask(mask: number, channels: number): ChannelLabel[] {
  if (mask === 0) return defaultChannelLabels(channels);
  if (mask === 0x4 && channels === 1) return ['M'];
  const hasBack = (mask & SPEAKER_BACK_PAIR) !== 0;
  const hasSide = (mask & SPEAKER_SIDE_PAIR) !== 0;
  const byBit: ChannelLabel[] = [
    'L', 'R', 'C', 'LFE', hasSide ? 'Lrs' : 'Ls', hasSide ? 'Rrs' : 'Rs', 'Lc', 'Rc', 'Cs',
    hasBack ? 'Lss' : 'Ls', hasBack ? 'Rss' : 'Rs', 'Tc', 'Tfl', 'Tfc', 'Tfr', 'Tbl', 'Tbc', 'Tbr',
  ];
  const labels: ChannelLabel[] = [];
  for (let bit = 0; bit < 32 && labels.length < channels; bit++) {
    if (mask & (1 << bit)) labels.push(byBit[bit] ?? 'unknown');
  }
  while (labels.length < channels) labels.push('unknown');
  return labels;
}

interface WaveFmt {
  layout: SampleLayout;
  encoding: string;
  channels: number;
  sampleRate: number;
  blockAlign: number;
  bitsPerSample: number;
  channelMask: number | null;
}

function parseFmt(b: Uint8Array): WaveFmt {
  if (b.length < 16) throw new EarmarkError('corrupt_file', `fmt chunk is ${b.length} bytes, shorter than 16`);
  let tag = u16(b, 0);
  const channels = u16(b, 2);
  const sampleRate = u32(b, 4);
  const blockAlign = u16(b, 12);
  const containerBits = u16(b, 14);
  let bitsPerSample = containerBits;
  let channelMask: number | null = null;
  checkStreamNumbers('fmt chunk', channels, sampleRate);
  if (tag === WAVE_FORMAT_EXTENSIBLE) {
    if (b.length < 40 || u16(b, 16) < 22) throw new EarmarkError('corrupt_file', 'WAVE_FORMAT_EXTENSIBLE fmt chunk is shorter than 40 bytes');
    const validBits = u16(b, 18);
    if (validBits > containerBits) throw new EarmarkError('corrupt_file', `valid bits ${validBits} exceed container bits ${containerBits}`);
    if (validBits > 0) bitsPerSample = validBits;
    channelMask = u32(b, 20);
    tag = u16(b, 24);
    if (KSDATAFORMAT_TAIL.some((v, i) => b[26 + i] !== v)) throw new EarmarkError('unsupported_encoding', 'WAVE_FORMAT_EXTENSIBLE sub-format GUID is not a known PCM or float GUID');
  }
  if (tag !== WAVE_FORMAT_PCM && tag !== WAVE_FORMAT_IEEE_FLOAT) {
    const name = KNOWN_TAGS[tag] ? ` (${KNOWN_TAGS[tag]})` : '';
    throw new EarmarkError('unsupported_encoding', `WAVE format tag 0x${tag.toString(16).padStart(4, '0')}${name} is not supported; only PCM and IEEE float are`);
  }
  if (containerBits === 0) throw new EarmarkError('corrupt_file', 'fmt chunk declares 0 bits per sample');
  const bytesPerSample = Math.ceil(containerBits / 8);
  if (blockAlign !== channels * bytesPerSample) {
    throw new EarmarkError('corrupt_file', `block align ${blockAlign} does not match ${channels} channels of ${containerBits}-bit samples`);
  }
  if (tag === WAVE_FORMAT_IEEE_FLOAT) {
    if (containerBits !== 32 && containerBits !== 64) throw new EarmarkError('unsupported_encoding', `${containerBits}-bit IEEE float is not supported`);
    return { layout: { kind: 'float', bytesPerSample: bytesPerSample as 4 | 8, bigEndian: false }, encoding: `pcm_f${containerBits}le`, channels, sampleRate, blockAlign, bitsPerSample, channelMask };
  }
  if (bytesPerSample > 4) throw new EarmarkError('unsupported_encoding', `${containerBits}-bit integer PCM is not supported`);
  const kind = bytesPerSample === 1 ? 'uint8' : 'int';
  const encoding = bytesPerSample === 1 ? 'pcm_u8' : `pcm_s${bytesPerSample * 8}le`;
  return { layout: { kind, bytesPerSample: bytesPerSample as 1 | 2 | 3 | 4, bigEndian: false }, encoding, channels, sampleRate, blockAlign, bitsPerSample, channelMask };
}

const KNOWN_CHUNKS = new Set(['data', 'fmt ', 'bext', 'LIST', 'fact', 'cue ', 'JUNK', 'junk', 'PAD ', 'iXML', 'axml', 'chna', 'ds64', 'smpl', 'inst', 'id3 ', 'ID3 ', 'acid', 'PEAK', 'levl', 'umid', 'cart', 'list', 'FLLR', 'minf', 'elm1', 'regn', 'ovwf']);
const isPrintableId = (b: Uint8Array, o: number): boolean => {
  for (let i = o; i < o + 4; i++) if (b[i] < 0x20 || b[i] > 0x7e) return false;
  return true;
};

/** After an odd-sized chunk: true when the pad byte is missing (the next chunk id starts right away). */
async function padMissing(reader: ByteReader): Promise<boolean> {
  const p = await reader.peek(5);
  if (p.length < 5) return false;
  if (KNOWN_CHUNKS.has(fourcc(p, 1))) return false;
  if (KNOWN_CHUNKS.has(fourcc(p, 0))) return true;
  return !isPrintableId(p, 1) && isPrintableId(p, 0);
}

interface Ds64 {
  dataBytes: number;
  sampleCount: number;
  table: Map<string, number>;
}

function parseDs64(b: Uint8Array): Ds64 {
  // EBU Tech 3306 ds64: riffSize, dataSize, sampleCount (64-bit each), tableLength, table.
  if (b.length < 28) throw new EarmarkError('corrupt_file', `ds64 chunk is ${b.length} bytes, shorter than 28`);
  const table = new Map<string, number>();
  const entries = u32(b, 24);
  for (let i = 0, o = 28; i < entries && o + 12 <= b.length; i++, o += 12) table.set(fourcc(b, o), u64(b, o + 4));
  return { dataBytes: u64(b, 8), sampleCount: u64(b, 16), table };
}

const MAX_HEADER_CHUNK_BYTES = 1024 * 1024;
const BEXT_TIME_REFERENCE_OFFSET = 338; // EBU Tech 3285: 256 + 32 + 32 + 10 + 8 bytes of text fields

/**
 * Reads chunk headers up to the data chunk. With a seekable reader it also looks past the data
 * for a bext chunk, then the caller reopens at dataOffset.
 */
export async function parseRiff(reader: ByteReader, container: Container): Promise<PcmPlan> {
  const head = await reader.readExactly(12, 'the RIFF header');
  const riffId = fourcc(head, 0);
  if (!['RIFF', 'RF64', 'BW64'].includes(riffId) || fourcc(head, 8) !== 'WAVE') throw new EarmarkError('unsupported_format', 'not a RIFF/WAVE file');
  const is64 = riffId !== 'RIFF';
  const warnings: DecodeWarning[] = [];
  let ds64: Ds64 | null = null;
  let fmt: WaveFmt | null = null;
  let timeReferenceSamples: number | null = null;
  let data: { offset: number; bytes: number } | null = null;

  for (;;) {
    if (data && !reader.seekable) break;
    const header = await reader.read(8);
    if (header.length < 8) {
      if (header.length > 0 && !data) throw new EarmarkError('corrupt_file', `file ends inside a chunk header at offset ${reader.position - header.length}`);
      break;
    }
    const id = fourcc(header, 0);
    let size = u32(header, 4);
    if (is64 && size === 0xffffffff) {
      const sized = id === 'data' ? ds64?.dataBytes : ds64?.table.get(id);
      if (sized === undefined) {
        if (data) break;
        throw new EarmarkError('corrupt_file', `${riffId} chunk '${id}' has a 64-bit size but no ds64 entry for it`);
      }
      size = sized;
    }
    const chunkOffset = reader.position;
    if (data) {
      // Past the audio: only metadata we can use; anything odd ends the scan quietly.
      if (id === 'bext' && timeReferenceSamples === null && size >= BEXT_TIME_REFERENCE_OFFSET + 8) {
        const body = await reader.read(BEXT_TIME_REFERENCE_OFFSET + 8);
        if (body.length === BEXT_TIME_REFERENCE_OFFSET + 8) timeReferenceSamples = u64(body, BEXT_TIME_REFERENCE_OFFSET);
        break;
      }
    } else if (id === 'ds64' && is64) {
      if (size > MAX_HEADER_CHUNK_BYTES) throw new EarmarkError('corrupt_file', `ds64 chunk of ${size} bytes is implausible`);
      ds64 = parseDs64(await reader.readExactly(size, 'the ds64 chunk'));
    } else if (id === 'fmt ') {
      if (size > MAX_HEADER_CHUNK_BYTES) throw new EarmarkError('corrupt_file', `fmt chunk of ${size} bytes is implausible`);
      fmt = parseFmt(await reader.readExactly(size, 'the fmt chunk'));
    } else if (id === 'bext' && size >= BEXT_TIME_REFERENCE_OFFSET + 8) {
      const body = await reader.readExactly(BEXT_TIME_REFERENCE_OFFSET + 8, 'the bext chunk');
      timeReferenceSamples = u64(body, BEXT_TIME_REFERENCE_OFFSET);
    } else if (id === 'data') {
      if (!fmt) throw new EarmarkError('corrupt_file', 'data chunk comes before the fmt chunk');
      if (is64 && !ds64) throw new EarmarkError('corrupt_file', `${riffId} file has no ds64 chunk before its data`);
      data = { offset: chunkOffset, bytes: size };
      if (!reader.seekable) break; // a stream is left positioned at the first sample
    }
    const consumed = reader.position - chunkOffset;
    const skipped = await reader.skip(size - consumed);
    if (skipped < size - consumed) break;
    if (size % 2 === 1) {
      if (!data && (await padMissing(reader))) {
        warnings.push({ code: 'odd_chunk_padding_missing', message: `chunk '${id}' has odd size ${size} but no pad byte follows it` });
      } else if ((await reader.skip(1)) < 1) break;
    }
  }

  if (!fmt) throw new EarmarkError('corrupt_file', 'no fmt chunk found');
  if (!data) throw new EarmarkError('corrupt_file', 'no data chunk found');
  const frames = Math.floor(data.bytes / fmt.blockAlign);
  if (ds64 && ds64.sampleCount !== 0 && ds64.sampleCount > frames) {
    // The declared length is not reached: the audio stops where the data does.
    warnings.push({ code: 'truncated_data', atFrame: frames, message: `audio data ends at frame ${frames}, the ds64 sample count declares ${ds64.sampleCount}` });
  } else if (ds64 && ds64.sampleCount !== 0 && ds64.sampleCount < frames) {
    warnings.push({ code: 'frames_mismatch', atFrame: ds64.sampleCount, message: `ds64 sample count ${ds64.sampleCount} is less than the ${frames} frames of data` });
  }
  const format: AudioFormat = {
    container,
    encoding: fmt.encoding,
    sampleRate: fmt.sampleRate,
    channels: fmt.channels,
    bitsPerSample: fmt.bitsPerSample,
    frames,
    durationSeconds: frames / fmt.sampleRate,
    channelLabels: fmt.channelMask === null ? defaultChannelLabels(fmt.channels) : labelsFromChannelMask(fmt.channelMask, fmt.channels),
    channelMask: fmt.channelMask,
    timeReferenceSamples,
  };
  return { format, layout: fmt.layout, blockAlign: fmt.blockAlign, dataOffset: data.offset, dataBytes: data.bytes, warnings };
}
