// MPEG audio probe: first frame header (rate, channel mode) and the Xing/Info/VBRI frame count.
import { EarmarkError } from '../errors/index.ts';
import { ascii, id3v2Length, u16be, u32be, u24be } from './bytes.ts';

export interface MpegFrameHeader {
  layer: 1 | 2 | 3;
  sampleRate: number;
  channels: 1 | 2;
  frameBytes: number;
  samplesPerFrame: number;
  mpeg1: boolean;
}

// kbit/s tables, ISO/IEC 11172-3 and 13818-3 (from memory).
const KBPS_V1: Record<number, number[]> = {
  1: [0, 32, 64, 96, 128, 160, 192, 224, 256, 288, 320, 352, 384, 416, 448],
  2: [0, 32, 48, 56, 64, 80, 96, 112, 128, 160, 192, 224, 256, 320, 384],
  3: [0, 32, 40, 48, 56, 64, 80, 96, 112, 128, 160, 192, 224, 256, 320],
};
const KBPS_V2_L1 = [0, 32, 48, 56, 64, 80, 96, 112, 128, 144, 160, 176, 192, 224, 256];
const KBPS_V2_L23 = [0, 8, 16, 24, 32, 40, 48, 56, 64, 80, 96, 112, 128, 144, 160];
const RATES_V1 = [44100, 48000, 32000];

export function parseMpegHeader(b: Uint8Array, o: number): MpegFrameHeader | null {
  if (o + 4 > b.length || b[o] !== 0xff || (b[o + 1] & 0xe0) !== 0xe0) return null;
  const versionBits = (b[o + 1] >> 3) & 3;
  const layerBits = (b[o + 1] >> 1) & 3;
  const bitrateIndex = b[o + 2] >> 4;
  const rateIndex = (b[o + 2] >> 2) & 3;
  if (versionBits === 1 || layerBits === 0 || bitrateIndex === 0 || bitrateIndex === 15 || rateIndex === 3) return null;
  const layer = (4 - layerBits) as 1 | 2 | 3;
  const mpeg1 = versionBits === 3;
  const sampleRate = RATES_V1[rateIndex] / (mpeg1 ? 1 : versionBits === 2 ? 2 : 4);
  const kbps = mpeg1
    ? KBPS_V1[layer][bitrateIndex]
    : layer === 1
      ? KBPS_V2_L1[bitrateIndex]
      : KBPS_V2_L23[bitrateIndex];
  const padding = (b[o + 2] >> 1) & 1;
  const samplesPerFrame = layer === 1 ? 384 : layer === 3 && !mpeg1 ? 576 : 1152;
  const frameBytes =
    layer === 1
      ? (Math.floor((12 * kbps * 1000) / sampleRate) + padding) * 4
      : Math.floor(((samplesPerFrame / 8) * kbps * 1000) / sampleRate) + padding;
  const channels = b[o + 3] >> 6 === 3 ? 1 : 2;
  return { layer, sampleRate, channels, frameBytes, samplesPerFrame, mpeg1 };
}

export interface Mp3Probe {
  header: MpegFrameHeader;
  /** Frames after encoder delay/padding removal when the Xing/Info/VBRI frame says; else null. */
  frames: number | null;
  /** Stream bytes the Xing/Info/VBRI frame declares, null without one. */
  streamBytes: number | null;
}

/** `head` is the start of the file (a few hundred KiB is plenty after any ID3v2 tag). */
export function probeMp3(head: Uint8Array, id3Skip = id3v2Length(head)): Mp3Probe {
  // A frame is real when two more follow where the lengths say: guards against sync bytes in tag data or noise.
  const limit = Math.min(head.length, id3Skip + 65536);
  for (let o = id3Skip; o + 4 <= limit; o++) {
    const h = parseMpegHeader(head, o);
    if (!h) continue;
    const second = o + h.frameBytes;
    const h2 = second + 4 > head.length ? null : parseMpegHeader(head, second);
    if (second + 4 > head.length) return { header: h, ...tagFrames(head, o, h) };
    if (!h2) continue;
    const third = second + h2.frameBytes;
    if (third + 4 > head.length || parseMpegHeader(head, third)) return { header: h, ...tagFrames(head, o, h) };
  }
  throw new EarmarkError('corrupt_file', 'no MPEG audio frame found near the start of the file');
}

function tagFrames(
  b: Uint8Array,
  o: number,
  h: MpegFrameHeader,
): { frames: number | null; streamBytes: number | null } {
  const none = { frames: null, streamBytes: null };
  if (h.layer !== 3) return none;
  const sideInfo = h.mpeg1 ? (h.channels === 1 ? 17 : 32) : h.channels === 1 ? 9 : 17;
  const x = o + 4 + sideInfo;
  const tag = ascii(b, x, 4);
  if (tag === 'Xing' || tag === 'Info') {
    const flags = u32be(b, x + 4);
    const streamBytes = flags & 2 ? u32be(b, x + 8 + (flags & 1 ? 4 : 0)) : null;
    if (!(flags & 1)) return { frames: null, streamBytes };
    const count = u32be(b, x + 8);
    const lame = x + 8 + 4 + (flags & 2 ? 4 : 0) + (flags & 4 ? 100 : 0) + (flags & 8 ? 4 : 0);
    let trim = 0;
    // LAME-style extension: 12-bit encoder delay and padding at offset 21 (from memory).
    if (lame + 24 <= b.length && /^[A-Za-z]{4}$/.test(ascii(b, lame, 4))) {
      const v = u24be(b, lame + 21);
      trim = (v >> 12) + (v & 0xfff);
    }
    return { frames: Math.max(0, count * h.samplesPerFrame - trim), streamBytes };
  }
  const v = o + 4 + 32;
  if (ascii(b, v, 4) === 'VBRI' && v + 18 <= b.length) {
    return { frames: u32be(b, v + 14) * h.samplesPerFrame - u16be(b, v + 6), streamBytes: u32be(b, v + 10) };
  }
  return none;
}
