// Native FLAC from part-way through: a frame found by the seek table and a search over frame
// headers, decoded after a copy of STREAMINFO.
import { stat } from 'node:fs/promises';
import { readRange } from './byte-reader.ts';
import { ascii, id3v2Length, u16be, u24be, u32be } from './bytes.ts';
import { decodeFrom } from './compressed.ts';
import { flacHeaderBlockSize, FlacInputSlicer } from './compressed-flac.ts';
import { OutputCheck } from './compressed-output.ts';
import type { Probe } from './compressed-probe.ts';
import { flacStreamInfo } from './flac-probe.ts';
import {
  DEFAULT_MAX_BLOCK_FRAMES,
  type AudioFormat,
  type DecodedAudio,
  type DecodeOptions,
  type SeekedAudio,
} from './types.ts';

interface FlacStream {
  /** Offset of the fLaC marker (after any ID3v2 tag). */
  start: number;
  /** The STREAMINFO block (4-byte header + 34 bytes). */
  streamInfo: Uint8Array;
  audioStart: number;
  minBlock: number;
  maxBlock: number;
  maxFrameBytes: number;
  sampleRate: number;
  channels: number;
  bits: number;
  /** Infinity when STREAMINFO does not say. */
  total: number;
  /** SEEKTABLE points (sample, byte offset from audioStart), placeholders dropped. */
  points: { sample: number; offset: number }[];
}

const MAX_METADATA_BLOCKS = 1024;

async function readFlacStream(path: string): Promise<FlacStream | null> {
  const head = await readRange(path, 0, 64 * 1024);
  const start = id3v2Length(head);
  const first = start === 0 ? head : await readRange(path, start, 64 * 1024);
  if (first.length < 42 || ascii(first, 0, 4) !== 'fLaC' || (first[4] & 0x7f) !== 0) return null;
  const si = first.slice(4, 42);
  const b = si.subarray(4);
  const minBlock = u16be(b, 0);
  const maxBlock = u16be(b, 2);
  const maxFrameBytes = u24be(b, 7);
  const { sampleRate, channels, bits, total: declared } = flacStreamInfo(si, 4);
  // 0 when the encoder could not go back to write it (a piped encode): unknown, bisect by bytes.
  const total = declared || Infinity;
  const points: { sample: number; offset: number }[] = [];
  let at = start + 4;
  let audioStart = 0;
  for (let i = 0; i < MAX_METADATA_BLOCKS; i++) {
    const h = await readRange(path, at, 4);
    if (h.length < 4) return null;
    const length = u24be(h, 1);
    if ((h[0] & 0x7f) === 3 && length % 18 === 0 && length <= 18 * 65536) {
      const table = await readRange(path, at + 4, length);
      for (let o = 0; o + 18 <= table.length; o += 18) {
        if (u32be(table, o) === 0xffffffff && u32be(table, o + 4) === 0xffffffff) continue; // placeholder
        points.push({
          sample: u32be(table, o) * 2 ** 32 + u32be(table, o + 4),
          offset: u32be(table, o + 8) * 2 ** 32 + u32be(table, o + 12),
        });
      }
    }
    at += 4 + length;
    if (h[0] & 0x80) {
      audioStart = at;
      break;
    }
  }
  if (audioStart === 0 || !maxBlock || !sampleRate) return null;
  return {
    start,
    streamInfo: si,
    audioStart,
    minBlock,
    maxBlock,
    maxFrameBytes,
    sampleRate,
    channels,
    bits,
    total,
    points,
  };
}

const SAMPLE_BITS = [0, 8, 12, 0, 16, 20, 24, 32];

/** First sample of the frame whose header is at `o` (already CRC-8 checked), or -1 when it does not fit this stream. */
function frameSample(b: Uint8Array, o: number, s: FlacStream): number {
  const assignment = b[o + 3] >> 4;
  if ((assignment < 8 ? assignment + 1 : 2) !== s.channels) return -1;
  const bitsCode = (b[o + 3] >> 1) & 7;
  if (bitsCode !== 0 && SAMPLE_BITS[bitsCode] !== s.bits) return -1;
  // The coded number, UTF-8 style (RFC 9639 section 9.1.5).
  const lead = b[o + 4];
  let extra = 0,
    value = lead;
  if (lead >= 0xfe) {
    extra = 6;
    value = 0;
  } else if (lead >= 0xfc) {
    extra = 5;
    value = lead & 1;
  } else if (lead >= 0xf8) {
    extra = 4;
    value = lead & 3;
  } else if (lead >= 0xf0) {
    extra = 3;
    value = lead & 7;
  } else if (lead >= 0xe0) {
    extra = 2;
    value = lead & 15;
  } else if (lead >= 0xc0) {
    extra = 1;
    value = lead & 31;
  }
  for (let k = 1; k <= extra; k++) {
    const c = b[o + 4 + k];
    if ((c & 0xc0) !== 0x80) return -1;
    value = value * 64 + (c & 63);
  }
  const variable = (b[o + 1] & 1) === 1;
  const sample = variable ? value : value * s.maxBlock;
  return sample < s.total ? sample : -1;
}

interface FoundFrame {
  offset: number;
  sample: number;
}

/** A frame is at most this long (STREAMINFO's largest frame, else 8 channels of 65535 32-bit samples). */
const frameReach = (s: FlacStream): number => (s.maxFrameBytes || 4 * 1024 * 1024) + 16;

const SCAN_WINDOW_BYTES = 256 * 1024;

/**
 * The first frame starting in [from, limit) whose header checks out and whose successor's header
 * (or the end of the stream) numbers on from it: a sync pattern inside frame data passes the
 * CRC-8 one time in 256, two consecutive ones practically never.
 */
async function findFrame(path: string, s: FlacStream, from: number, limit: number): Promise<FoundFrame | null> {
  const reach = frameReach(s);
  let candidateFloor = from;
  while (candidateFloor < limit) {
    const windowBytes = Math.min(SCAN_WINDOW_BYTES, limit - candidateFloor) + reach;
    const b = await readRange(path, candidateFloor, windowBytes);
    const candidatesEnd = Math.min(b.length, limit - candidateFloor, SCAN_WINDOW_BYTES);
    for (let o = b.indexOf(0xff); o >= 0 && o < candidatesEnd; o = b.indexOf(0xff, o + 1)) {
      const blockSize = flacHeaderBlockSize(b, o);
      if (blockSize === 0) continue;
      const sample = frameSample(b, o, s);
      if (sample < 0) continue;
      const next = sample + blockSize;
      if (next >= s.total) return { offset: candidateFloor + o, sample };
      // Sync patterns inside this frame's data may pass too: look on to the one numbered `next`.
      const successorEnd = Math.min(b.length, o + reach);
      for (let p = b.indexOf(0xff, o + 1); p >= 0 && p < successorEnd; p = b.indexOf(0xff, p + 1)) {
        if (flacHeaderBlockSize(b, p) !== 0 && frameSample(b, p, s) === next)
          return { offset: candidateFloor + o, sample };
      }
    }
    if (b.length < windowBytes) return null;
    candidateFloor += SCAN_WINDOW_BYTES;
  }
  return null;
}

const MAX_SEARCH_STEPS = 64;

/** The verified frame at or before `target` nearest to it that a bounded search finds. */
async function flacStartFrame(
  path: string,
  s: FlacStream,
  target: number,
  fileBytes: number,
): Promise<FoundFrame | null> {
  let lo = await findFrame(path, s, s.audioStart, fileBytes);
  if (lo?.sample !== 0) return null;
  let hiOffset = fileBytes,
    hiSample = s.total;
  for (const p of s.points) {
    const offset = s.audioStart + p.offset;
    if (p.sample <= target && p.sample > lo.sample && offset < fileBytes) {
      const at = await findFrame(path, s, offset, offset + 1);
      if (at && at.sample === p.sample) lo = at;
    } else if (p.sample > target && p.sample < hiSample && offset > lo.offset) {
      hiOffset = offset;
      hiSample = p.sample;
    }
  }
  for (let step = 0; step < MAX_SEARCH_STEPS; step++) {
    if (target - lo.sample < s.maxBlock || hiOffset - lo.offset <= 1) break;
    // Interpolate by samples, every other step bisect by bytes: silence packs long spans into few bytes.
    const share = step % 2 === 0 && hiSample < Infinity ? (target - lo.sample) / (hiSample - lo.sample) : 0.5;
    const pos = Math.min(hiOffset - 1, Math.max(lo.offset + 1, Math.floor(lo.offset + share * (hiOffset - lo.offset))));
    // Every byte of the stream is inside a frame, so a real header follows `pos` within one frame's length: look no further.
    const found = await findFrame(path, s, pos, Math.min(hiOffset, pos + frameReach(s)));
    if (found && found.sample <= target && found.sample > lo.sample) lo = found;
    else if (found && found.sample > target) {
      hiOffset = found.offset;
      hiSample = Math.min(hiSample, found.sample);
    } else hiOffset = pos; // no frame starts in [pos, hiOffset)
  }
  return lo;
}

export async function openFlacAt(
  path: string,
  frame: number,
  options: DecodeOptions,
  format: AudioFormat,
): Promise<SeekedAudio | null> {
  const s = await readFlacStream(path);
  if (!s || frame >= s.total) return null;
  const fileBytes = (await stat(path)).size;
  const start = await flacStartFrame(path, s, frame, fileBytes);
  if (!start || start.sample === 0) return null;
  const blockFrames = options.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES;
  // No declared length from here, so the frame-count verdicts stay quiet; output checks and the FLAC scale are the usual ones.
  const probe: Probe = {
    codec: 'flac',
    encoding: 'flac',
    sampleRate: s.sampleRate,
    channels: s.channels,
    bitsPerSample: s.bits,
    frames: null,
    framesSlack: 0,
    wholeFile: false,
    endMissing: null,
  };
  const check = new OutputCheck(probe, blockFrames, [], Infinity);
  const header = s.streamInfo.slice();
  header[0] |= 0x80; // STREAMINFO becomes the last metadata block: the frames follow it
  const marker = new Uint8Array([0x66, 0x4c, 0x61, 0x43]);
  const blocks = decodeFrom(
    path,
    'flac',
    concat(marker, header),
    start.offset,
    fileBytes,
    new FlacInputSlicer(s.channels),
    check,
  );
  const audio: DecodedAudio = {
    format,
    blocks,
    warnings: [],
    get framesDecoded() {
      return check.framesOut;
    },
  };
  return { audio, firstFrame: start.sample, method: 'flac_frame' };
}

function concat(a: Uint8Array, b: Uint8Array): Uint8Array {
  const out = new Uint8Array(a.length + b.length);
  out.set(a);
  out.set(b, a.length);
  return out;
}
