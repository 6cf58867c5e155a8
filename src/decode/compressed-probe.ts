// Container probes: what the file declares before any decoding, used to fill AudioFormat and to
// check the decoder's output (channel count, rate, frame count).
import { EarmarkError } from '../errors/index.ts';
import type { Container } from './types.ts';
import { ascii, frameChainCut, id3v2Length, readRange, u16be, u16le, u32be, u32le, u64be, u64le } from './compressed-bytes.ts';
import { parseMpegHeader, probeMp3 } from './compressed-mp3.ts';
import { probeMp4, type Mp4Layout } from './compressed-mp4.ts';
import { probeWebm } from './compressed-webm.ts';

export type CodecPackage = 'flac' | 'mp3' | 'mp4' | 'aac' | 'vorbis' | 'opus' | 'webm' | 'caf';

export interface Probe {
  codec: CodecPackage;
  encoding: string;
  sampleRate: number;
  channels: number;
  bitsPerSample: number | null;
  /** Frames the container declares; null when it cannot say. */
  frames: number | null;
  /** How far decoded frames may differ from `frames` (codec priming/padding) before we warn. */
  framesSlack: number;
  /** Decoder needs the file in one piece (MP4 with moov after mdat). */
  wholeFile: boolean;
  /** true: the container shows the file was cut; false: it shows the file is whole; null: it cannot tell. */
  endMissing: boolean | null;
  /** MP4 with its index after the audio: where its boxes are, to feed the index first. */
  mp4Layout?: Mp4Layout;
  /** MP4: frames its sample table spans (bounds the decoded size when mdhd is unset). */
  tableFrames?: number | null;
}

const HEAD_BYTES = 1024 * 1024;

export async function probe(path: string, container: Container, fileBytes: number): Promise<Probe> {
  if (container === 'm4a') {
    const { tableFrames, layout, moovFirst, cut, ...m } = await probeMp4(path, fileBytes);
    const slack = m.encoding === 'flac' || m.encoding === 'alac' ? 0 : 4096;
    // mdhd is one patchable number; the sample table is what the decoder will actually produce.
    if (m.frames !== null && tableFrames !== null && tableFrames > m.frames + Math.max(slack, m.frames / 100)) {
      throw new EarmarkError('corrupt_file',
        `MP4 sample table holds ${(tableFrames / m.sampleRate).toFixed(1)} s of audio but mdhd declares ${(m.frames / m.sampleRate).toFixed(1)} s`,
        { declaredFrames: m.frames, tableFrames });
    }
    return { codec: 'mp4', ...m, tableFrames, bitsPerSample: null, framesSlack: slack, wholeFile: !moovFirst, endMissing: cut,
      ...(moovFirst ? {} : { mp4Layout: layout }) };
  }
  const head = await readRange(path, 0, HEAD_BYTES);
  switch (container) {
    case 'flac': {
      const f = probeFlac(head);
      return { ...f, endMissing: flacEndMissing(await readTail(path, fileBytes), f.frames, f.maxBlockFrames) };
    }
    case 'mp3': {
      // A large ID3v2 tag (cover art) can push the first frame beyond the head we read.
      const skip = id3v2Length(head);
      const m = probeMp3(skip + 65536 > head.length ? await readRange(path, skip, HEAD_BYTES) : head.subarray(skip), 0);
      const h = m.header;
      // Without a Xing/Info/VBRI byte count, the last frame's own length tells a cut.
      const endMissing = m.streamBytes !== null ? fileBytes - skip < m.streamBytes - h.frameBytes
        : frameChainCut(await readTail(path, fileBytes), (b, o) => parseMpegHeader(b, o)?.frameBytes ?? 0);
      return { codec: 'mp3', encoding: h.layer === 3 ? 'mp3' : `mp${h.layer}`, sampleRate: h.sampleRate, channels: h.channels,
        bitsPerSample: null, frames: m.frames, framesSlack: 2 * h.samplesPerFrame, wholeFile: false, endMissing };
    }
    case 'aac': return { ...probeAdts(head), endMissing: frameChainCut(await readTail(path, fileBytes), adtsFrameBytes) };
    case 'ogg': return probeOgg(path, head, fileBytes);
    case 'webm': return { codec: 'webm', ...probeWebm(head), bitsPerSample: null, framesSlack: 4096, wholeFile: false, endMissing: null };
    case 'caf': return probeCaf(head, fileBytes);
    default: throw new EarmarkError('unsupported_format', `the compressed decoder does not read ${container} files`);
  }
}

const TAIL_BYTES = 65536;

function readTail(path: string, fileBytes: number): Promise<Uint8Array> {
  return readRange(path, Math.max(0, fileBytes - TAIL_BYTES), TAIL_BYTES);
}

/** FLAC STREAMINFO's rate, channels, depth and total samples (0 = unknown), its body starting at `o`. */
export function flacStreamInfo(b: Uint8Array, o: number): { sampleRate: number; channels: number; bits: number; total: number } {
  if (o + 18 > b.length) throw new EarmarkError('corrupt_file', 'FLAC STREAMINFO is cut off');
  const sampleRate = (b[o + 10] << 12) | (b[o + 11] << 4) | (b[o + 12] >> 4);
  const channels = ((b[o + 12] >> 1) & 7) + 1;
  const bits = (((b[o + 12] & 1) << 4) | (b[o + 13] >> 4)) + 1;
  const total = (b[o + 13] & 0xf) * 2 ** 32 + u32be(b, o + 14);
  if (sampleRate === 0 || bits < 4 || u16be(b, o + 2) < 16) throw new EarmarkError('corrupt_file', 'FLAC STREAMINFO is invalid');
  return { sampleRate, channels, bits, total };
}

function probeFlac(head: Uint8Array): Probe & { maxBlockFrames: number } {
  const o = id3v2Length(head);
  if (ascii(head, o, 4) !== 'fLaC') throw new EarmarkError('corrupt_file', 'FLAC signature not found');
  if ((head[o + 4] & 0x7f) !== 0 || (u32be(head, o + 4) & 0xffffff) !== 34) throw new EarmarkError('corrupt_file', 'FLAC stream does not start with STREAMINFO');
  const s = flacStreamInfo(head, o + 8);
  return { codec: 'flac', encoding: 'flac', sampleRate: s.sampleRate, channels: s.channels, bitsPerSample: s.bits,
    frames: s.total || null, framesSlack: 0, wholeFile: false, endMissing: null, maxBlockFrames: u16be(head, o + 10) };
}

const ADTS_RATES = [96000, 88200, 64000, 48000, 44100, 32000, 24000, 22050, 16000, 12000, 11025, 8000, 7350];

/** ADTS frame length (ISO/IEC 14496-3 1.A.2: 13 bits, header included) at `o`, 0 when no header is there. */
function adtsFrameBytes(b: Uint8Array, o: number): number {
  if (o + 7 > b.length || b[o] !== 0xff || (b[o + 1] & 0xf6) !== 0xf0 || ((b[o + 2] >> 2) & 15) >= ADTS_RATES.length) return 0;
  const bytes = ((b[o + 3] & 3) << 11) | (b[o + 4] << 3) | (b[o + 5] >> 5);
  return bytes >= 7 ? bytes : 0;
}

function probeAdts(head: Uint8Array): Probe {
  const o = id3v2Length(head);
  if (head[o] !== 0xff || (head[o + 1] & 0xf6) !== 0xf0) throw new EarmarkError('corrupt_file', 'ADTS sync word not found');
  const sampleRate = ADTS_RATES[(head[o + 2] >> 2) & 15];
  const channels = ((head[o + 2] & 1) << 2) | (head[o + 3] >> 6);
  if (!sampleRate) throw new EarmarkError('corrupt_file', 'ADTS header has an invalid sample rate');
  if (!channels) throw new EarmarkError('unsupported_encoding', 'ADTS with in-band channel configuration (0) is not supported');
  return { codec: 'aac', encoding: 'aac', sampleRate, channels, bitsPerSample: null, frames: null, framesSlack: 4096, wholeFile: false, endMissing: null };
}

async function probeOgg(path: string, head: Uint8Array, fileBytes: number): Promise<Probe> {
  if (ascii(head, 0, 4) !== 'OggS' || head.length < 28) throw new EarmarkError('corrupt_file', 'Ogg page header not found');
  const serial = u32le(head, 14);
  const p = 27 + head[26];
  let info: Omit<Probe, 'frames' | 'endMissing'> & { preSkip: number; total: number | null };
  if (ascii(head, p, 7) === '\x01vorbis') {
    info = { codec: 'vorbis', encoding: 'vorbis', channels: head[p + 11], sampleRate: u32le(head, p + 12), bitsPerSample: null,
      framesSlack: 2048, wholeFile: false, preSkip: 0, total: null };
  } else if (ascii(head, p, 8) === 'OpusHead') {
    // Opus always decodes at 48 kHz; the header's rate is only the source's.
    info = { codec: 'opus', encoding: 'opus', channels: head[p + 9], sampleRate: 48000, bitsPerSample: null,
      framesSlack: 1920, wholeFile: false, preSkip: u16le(head, p + 10), total: null };
  } else if (ascii(head, p, 5) === '\x7fFLAC' && ascii(head, p + 9, 4) === 'fLaC') {
    const s = flacStreamInfo(head, p + 17);
    info = { codec: 'flac', encoding: 'flac', channels: s.channels, sampleRate: s.sampleRate, bitsPerSample: s.bits,
      framesSlack: 0, wholeFile: false, preSkip: 0, total: s.total || null };
  } else throw new EarmarkError('unsupported_encoding', 'Ogg stream is not Vorbis, Opus or FLAC');
  if (!info.channels || !info.sampleRate) throw new EarmarkError('corrupt_file', 'Ogg identification header declares no channels or rate');
  const { preSkip, total, ...rest } = info;
  const last = await lastPage(path, fileBytes, serial);
  // Without the end-of-stream page the last granule is where the cut happened, not the length.
  const granule = total ?? (last?.eos ? last.granule : null);
  return { ...rest, frames: granule === null ? null : Math.max(0, granule - preSkip), endMissing: !last?.eos };
}

/** Granule position of the last page of the stream: the stream's end in output frames (Vorbis/FLAC) or 48 kHz samples + pre-skip (Opus). */
async function lastPage(path: string, fileBytes: number, serial: number): Promise<{ granule: number; eos: boolean } | null> {
  const span = Math.min(fileBytes, 128 * 1024);
  const tail = await readRange(path, fileBytes - span, span);
  for (let o = tail.length - 27; o >= 0; o--) {
    if (tail[o] !== 0x4f || ascii(tail, o, 4) !== 'OggS' || u32le(tail, o + 14) !== serial) continue;
    if (u32le(tail, o + 6) === 0xffffffff && u32le(tail, o + 10) === 0xffffffff) continue; // no packet ends on this page
    const bodyBytes = tail.subarray(o + 27, o + 27 + tail[o + 26]).reduce((sum, lace) => sum + lace, 0);
    const complete = o + 27 + tail[o + 26] + bodyBytes <= tail.length;
    return { granule: u64le(tail, o + 6), eos: complete && (tail[o + 5] & 4) !== 0 };
  }
  return null;
}

function probeCaf(head: Uint8Array, fileBytes: number): Probe {
  if (ascii(head, 0, 4) !== 'caff') throw new EarmarkError('corrupt_file', 'CAF signature not found');
  let desc: { rate: number; format: string; flags: number; bytesPerPacket: number; framesPerPacket: number; channels: number; bits: number } | null = null;
  let dataBytes: number | null = null;
  let validFrames: number | null = null;
  let dataEnd = 0;
  for (let o = 8; o + 12 <= head.length;) {
    const type = ascii(head, o, 4);
    const size = u64be(head, o + 4);
    const body = o + 12;
    if (type === 'desc' && body + 32 <= head.length) {
      desc = { rate: new DataView(head.buffer, head.byteOffset + body, 8).getFloat64(0), format: ascii(head, body + 8, 4),
        flags: u32be(head, body + 12), bytesPerPacket: u32be(head, body + 16), framesPerPacket: u32be(head, body + 20),
        channels: u32be(head, body + 24), bits: u32be(head, body + 28) };
    } else if (type === 'pakt' && body + 16 <= head.length) validFrames = u64be(head, body + 8);
    if (type === 'data') {
      const open = size === 2 ** 64 - 1 || size > 2 ** 53;
      dataBytes = open ? fileBytes - body - 4 : size - 4;
      dataEnd = open ? fileBytes : body + size;
      break;
    }
    o = body + size;
  }
  if (!desc || !desc.channels || !(desc.rate > 0)) throw new EarmarkError('corrupt_file', 'CAF desc chunk is missing or invalid');
  const kinds: Record<string, string> = { alaw: 'pcm_alaw', ulaw: 'pcm_mulaw', ima4: 'adpcm_ima_qt' };
  let encoding = kinds[desc.format];
  if (desc.format === 'lpcm') encoding = `pcm_${desc.flags & 1 ? 'f' : 's'}${desc.bits}${desc.flags & 2 ? 'le' : 'be'}`;
  if (!encoding) throw new EarmarkError('unsupported_encoding', `CAF audio format ${JSON.stringify(desc.format)} is not supported`);
  const fromData = dataBytes !== null && desc.bytesPerPacket ? Math.floor(dataBytes / desc.bytesPerPacket) * desc.framesPerPacket : null;
  return { codec: 'caf', encoding, sampleRate: desc.rate, channels: desc.channels, bitsPerSample: desc.format === 'lpcm' ? desc.bits : null,
    frames: validFrames ?? fromData, framesSlack: desc.format === 'ima4' ? 64 : 0, wholeFile: false,
    endMissing: dataBytes === null ? null : dataEnd > fileBytes };
}

/** CRC-8, polynomial 0x07, over a FLAC frame header (RFC 9639). */
function crc8(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  for (let i = from; i < to; i++) { c ^= b[i]; for (let k = 0; k < 8; k++) c = c & 0x80 ? ((c << 1) ^ 0x07) & 0xff : (c << 1) & 0xff; }
  return c;
}

const CRC16_TABLE = Uint16Array.from({ length: 256 }, (_, i) => {
  let c = i << 8;
  for (let k = 0; k < 8; k++) c = c & 0x8000 ? (c << 1) ^ 0x8005 : c << 1;
  return c & 0xffff;
});

/** Whether a frame starting at `o` ends exactly at the end of `tail` (or before an ID3v1 tag): its CRC-16 footer matches (RFC 9639). */
function frameEndsFile(tail: Uint8Array, o: number): boolean {
  const ends = [tail.length];
  if (tail.length - o > 130 && ascii(tail, tail.length - 128, 3) === 'TAG') ends.push(tail.length - 128);
  return ends.some((end) => {
    let c = 0;
    for (let i = o; i < end - 2; i++) c = ((c << 8) ^ CRC16_TABLE[(c >> 8) ^ tail[i]]) & 0xffff;
    return c === u16be(tail, end - 2);
  });
}

/**
 * Whether the file was cut: its last frame does not end the file (cut inside a frame), or the
 * last frame header sits far before the end of the declared samples (cut between frames).
 * null when no header is found or the total is unknown.
 */
function flacEndMissing(tail: Uint8Array, total: number | null, maxBlock: number): boolean | null {
  if (!total) return null;
  let headerSeen = false;
  for (let o = tail.length - 6; o >= 0; o--) {
    if (tail[o] !== 0xff || (tail[o + 1] & 0xfe) !== 0xf8) continue;
    const variable = tail[o + 1] & 1;
    const sizeCode = tail[o + 2] >> 4;
    const rateCode = tail[o + 2] & 15;
    if (sizeCode === 0 || rateCode === 15) continue;
    // UTF-8-style coded frame or sample number.
    let p = o + 4;
    const lead = tail[p];
    let extra = lead < 0x80 ? 0 : lead >= 0xfe ? 6 : lead >= 0xfc ? 5 : lead >= 0xf8 ? 4 : lead >= 0xf0 ? 3 : lead >= 0xe0 ? 2 : lead >= 0xc0 ? 1 : -1;
    if (extra < 0) continue;
    let n = extra ? lead & (0x3f >> extra) : lead;
    for (p++; extra > 0; extra--, p++) n = n * 64 + (tail[p] & 0x3f);
    p += sizeCode === 6 ? 1 : sizeCode === 7 ? 2 : 0;
    p += rateCode === 12 ? 1 : rateCode === 13 || rateCode === 14 ? 2 : 0;
    if (p >= tail.length || crc8(tail, o, p) !== tail[p]) continue;
    headerSeen = true;
    // A header whose frame does not end the file is a cut last frame or a false sync in frame data: look further back.
    if (!frameEndsFile(tail, o)) continue;
    const firstSample = variable ? n : n * maxBlock;
    return firstSample + maxBlock < total - maxBlock;
  }
  return headerSeen ? true : null;
}
