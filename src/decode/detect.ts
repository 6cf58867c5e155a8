// Container detection from leading bytes only; file names are never trusted.
import type { Container } from './types.ts';

/** Bytes openAudioFile reads for detection (enough to see a second MPEG/ADTS frame header). */
export const DETECT_HEAD_BYTES = 4096;

function ascii(head: Uint8Array, offset: number, text: string): boolean {
  if (head.length < offset + text.length) return false;
  for (let i = 0; i < text.length; i++) if (head[offset + i] !== text.charCodeAt(i)) return false;
  return true;
}

/**
 * Total length of an ID3v2 tag at the start of `head` (header + body + optional footer),
 * or 0 when there is none. ID3v2.4 main structure, section 3.1: synchsafe size.
 */
export function id3v2Length(head: Uint8Array): number {
  if (head.length < 10 || !ascii(head, 0, 'ID3')) return 0;
  const major = head[3];
  if (major < 2 || major > 4 || head[4] === 0xff) return 0;
  for (let i = 6; i < 10; i++) if (head[i] & 0x80) return 0;
  const bodyBytes = (head[6] << 21) | (head[7] << 14) | (head[8] << 7) | head[9];
  const footerBytes = head[5] & 0x10 ? 10 : 0;
  return 10 + bodyBytes + footerBytes;
}

// ISO/IEC 11172-3 / 13818-3 layer III bitrates (kbit/s) by [mpeg1?][index].
const LAYER3_KBPS_MPEG1 = [0, 32, 40, 48, 56, 64, 80, 96, 112, 128, 160, 192, 224, 256, 320];
const LAYER3_KBPS_MPEG2 = [0, 8, 16, 24, 32, 40, 48, 56, 64, 80, 96, 112, 128, 144, 160];
const MPEG1_RATES = [44100, 48000, 32000];

/** Byte length of the layer-III frame whose header starts at `offset`, or 0 if the header is invalid. */
function mp3FrameBytes(head: Uint8Array, offset: number): number {
  if (head.length < offset + 4) return 0;
  const b1 = head[offset + 1];
  const b2 = head[offset + 2];
  if (head[offset] !== 0xff || (b1 & 0xe0) !== 0xe0) return 0;
  const version = (b1 >> 3) & 3; // 3 = MPEG-1, 2 = MPEG-2, 0 = MPEG-2.5, 1 reserved
  const layer = (b1 >> 1) & 3; // 1 = layer III
  const bitrateIndex = b2 >> 4;
  const rateIndex = (b2 >> 2) & 3;
  if (version === 1 || layer !== 1 || bitrateIndex === 0 || bitrateIndex === 15 || rateIndex === 3) return 0;
  if ((head[offset + 3] & 3) === 2) return 0; // reserved emphasis
  const mpeg1 = version === 3;
  const sampleRate = MPEG1_RATES[rateIndex] / (mpeg1 ? 1 : version === 2 ? 2 : 4);
  const kbps = (mpeg1 ? LAYER3_KBPS_MPEG1 : LAYER3_KBPS_MPEG2)[bitrateIndex];
  const padding = (b2 >> 1) & 1;
  return Math.floor(((mpeg1 ? 144 : 72) * kbps * 1000) / sampleRate) + padding;
}

/** ADTS frame length from the header at `offset` (ISO/IEC 13818-7 adts_fixed/variable_header), 0 if invalid. */
function adtsFrameBytes(head: Uint8Array, offset: number): number {
  if (head.length < offset + 7) return 0;
  if (head[offset] !== 0xff || (head[offset + 1] & 0xf6) !== 0xf0) return 0; // sync + layer 00
  const rateIndex = (head[offset + 2] >> 2) & 0x0f;
  if (rateIndex > 12) return 0;
  const frameBytes = ((head[offset + 3] & 3) << 11) | (head[offset + 4] << 3) | (head[offset + 5] >> 5);
  return frameBytes >= 7 ? frameBytes : 0;
}

/** A valid frame at `offset`, and a second one right after it whenever `head` reaches that far. */
function framedStream(head: Uint8Array, offset: number, frameBytes: (h: Uint8Array, o: number) => number): boolean {
  const first = frameBytes(head, offset);
  if (first === 0) return false;
  const next = offset + first;
  if (head.length < next + 4) return true;
  return frameBytes(head, next) > 0;
}

/** Container by magic bytes, or null when none matches. */
export function detectContainer(head: Uint8Array): Container | null {
  if (ascii(head, 8, 'WAVE')) {
    if (ascii(head, 0, 'RIFF')) return 'wav';
    if (ascii(head, 0, 'RF64')) return 'rf64';
    if (ascii(head, 0, 'BW64')) return 'bw64';
  }
  if (ascii(head, 0, 'FORM')) {
    if (ascii(head, 8, 'AIFF')) return 'aiff';
    if (ascii(head, 8, 'AIFC')) return 'aifc';
  }
  if (ascii(head, 0, 'fLaC')) return 'flac';
  if (ascii(head, 0, 'OggS') && head[4] === 0) return 'ogg';
  if (head.length >= 4 && head[0] === 0x1a && head[1] === 0x45 && head[2] === 0xdf && head[3] === 0xa3) return 'webm';
  if (ascii(head, 0, 'caff')) return 'caf';
  if (ascii(head, 4, 'ftyp')) return 'm4a';
  const tagBytes = id3v2Length(head);
  if (tagBytes > 0) {
    if (head.length < tagBytes + 4) return null; // caller reads past the tag and asks again
    return detectAfterId3(head.subarray(tagBytes));
  }
  if (framedStream(head, 0, mp3FrameBytes)) return 'mp3';
  if (framedStream(head, 0, adtsFrameBytes)) return 'aac';
  return null;
}

/** What follows an ID3v2 tag: FLAC, MPEG audio (any sync is accepted after a tag) or ADTS. */
export function detectAfterId3(rest: Uint8Array): Container | null {
  if (ascii(rest, 0, 'fLaC')) return 'flac';
  if (id3v2Length(rest) > 0) return detectContainer(rest);
  if (adtsFrameBytes(rest, 0) > 0) return 'aac';
  if (rest.length >= 2 && rest[0] === 0xff && (rest[1] & 0xe0) === 0xe0) return 'mp3';
  return null;
}
