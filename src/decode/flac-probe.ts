// Native FLAC probe: STREAMINFO, and whether the file's last frame shows it was cut.
import { EarmarkError } from '../errors/index.ts';
import { ascii, id3v2Length, u16be, u32be } from './bytes.ts';
import type { Probe } from './compressed-probe.ts';

/** FLAC STREAMINFO's rate, channels, depth and total samples (0 = unknown), its body starting at `o`. */
export function flacStreamInfo(
  b: Uint8Array,
  o: number,
): { sampleRate: number; channels: number; bits: number; total: number } {
  if (o + 18 > b.length) throw new EarmarkError('corrupt_file', 'FLAC STREAMINFO is cut off');
  const sampleRate = (b[o + 10] << 12) | (b[o + 11] << 4) | (b[o + 12] >> 4);
  const channels = ((b[o + 12] >> 1) & 7) + 1;
  const bits = (((b[o + 12] & 1) << 4) | (b[o + 13] >> 4)) + 1;
  const total = (b[o + 13] & 0xf) * 2 ** 32 + u32be(b, o + 14);
  if (sampleRate === 0 || bits < 4 || u16be(b, o + 2) < 16)
    throw new EarmarkError('corrupt_file', 'FLAC STREAMINFO is invalid');
  return { sampleRate, channels, bits, total };
}

export function probeFlac(head: Uint8Array): Probe & { maxBlockFrames: number } {
  const o = id3v2Length(head);
  if (ascii(head, o, 4) !== 'fLaC') throw new EarmarkError('corrupt_file', 'FLAC signature not found');
  if ((head[o + 4] & 0x7f) !== 0 || (u32be(head, o + 4) & 0xffffff) !== 34)
    throw new EarmarkError('corrupt_file', 'FLAC stream does not start with STREAMINFO');
  const s = flacStreamInfo(head, o + 8);
  return {
    codec: 'flac',
    encoding: 'flac',
    sampleRate: s.sampleRate,
    channels: s.channels,
    bitsPerSample: s.bits,
    frames: s.total || null,
    framesSlack: 0,
    wholeFile: false,
    endMissing: null,
    maxBlockFrames: u16be(head, o + 10),
  };
}

/** CRC-8, polynomial 0x07, over a FLAC frame header (RFC 9639). */
function crc8(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  for (let i = from; i < to; i++) {
    c ^= b[i];
    for (let k = 0; k < 8; k++) c = c & 0x80 ? ((c << 1) ^ 0x07) & 0xff : (c << 1) & 0xff;
  }
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
export function flacEndMissing(tail: Uint8Array, total: number | null, maxBlock: number): boolean | null {
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
    let extra =
      lead < 0x80
        ? 0
        : lead >= 0xfe
          ? 6
          : lead >= 0xfc
            ? 5
            : lead >= 0xf8
              ? 4
              : lead >= 0xf0
                ? 3
                : lead >= 0xe0
                  ? 2
                  : lead >= 0xc0
                    ? 1
                    : -1;
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
