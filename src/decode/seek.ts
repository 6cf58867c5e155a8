// Opening a file part-way through, for excerpts: PCM containers by byte offset, native FLAC from
// a frame found by the seek table and a search over frame headers, MP3 (with a LAME/Info header,
// so the decoder's trim is known) from a few frames before the span, found by walking the frame
// headers. Everything else decodes from the start (the caller skips to its span).
import { createReadStream } from 'node:fs';
import { open, stat } from 'node:fs/promises';
import type { PcmBlock } from '../analysis/audio.ts';
import { EarmarkError } from '../errors/index.ts';
import { parseAiff } from './aiff.ts';
import { ByteReader } from './byte-reader.ts';
import { id3v2Length, readRange, u16be, u24be, u32be } from './compressed-bytes.ts';
import { loadCodec } from './compressed-codecs.ts';
import { flacHeaderBlockSize, FlacInputSlicer } from './compressed-flac.ts';
import { parseMpegHeader } from './compressed-mp3.ts';
import { OutputCheck } from './compressed-output.ts';
import { flacStreamInfo, type Probe } from './compressed-probe.ts';
import { INPUT_CHUNK_BYTES } from './compressed.ts';
import { replaceNonFinite } from './finite.ts';
import { openAudioFile } from './index.ts';
import { parseRiff, streamPcm } from './riff.ts';
import { DEFAULT_MAX_BLOCK_FRAMES, type AudioFormat, type DecodedAudio, type DecodeOptions } from './types.ts';

export interface SeekedAudio {
  audio: DecodedAudio;
  /** Frame of the first sample the blocks hold: at or before the frame asked for. */
  firstFrame: number;
  /** How the start was reached. */
  method: 'pcm_offset' | 'flac_frame' | 'mp3_frame' | 'from_start';
}

/** Decodes `path` from `startFrame` or the nearest frame before it the format allows. */
export async function openAudioFileAt(path: string, startFrame: number, options: DecodeOptions = {}): Promise<SeekedAudio> {
  const whole = await openAudioFile(path, options);
  const { container } = whole.format;
  const frame = Math.max(0, Math.floor(startFrame));
  if (frame === 0) return { audio: whole, firstFrame: 0, method: 'from_start' };
  if (container === 'wav' || container === 'rf64' || container === 'bw64' || container === 'aiff' || container === 'aifc') {
    return { audio: await openPcmAt(path, container, frame, options), firstFrame: frame, method: 'pcm_offset' };
  }
  if (container === 'flac') {
    const seeked = await openFlacAt(path, frame, options, whole.format);
    if (seeked) return seeked;
  }
  if (container === 'mp3') {
    const seeked = await openMp3At(path, frame, options, whole.format);
    if (seeked) return seeked;
  }
  return { audio: whole, firstFrame: 0, method: 'from_start' };
}

async function openPcmAt(path: string, container: 'wav' | 'rf64' | 'bw64' | 'aiff' | 'aifc', frame: number, options: DecodeOptions): Promise<DecodedAudio> {
  const sizeBytes = (await stat(path)).size;
  const handle = await open(path, 'r');
  let plan;
  try {
    const reader = ByteReader.fromFile(handle, sizeBytes);
    plan = container === 'aiff' || container === 'aifc' ? await parseAiff(reader, container) : await parseRiff(reader, container);
  } finally {
    await handle.close();
  }
  // The frame's first byte: data offset + frame * blockAlign; past the end there is nothing to read.
  const skipBytes = Math.min(frame * plan.blockAlign, plan.dataBytes);
  const moved = { ...plan, dataOffset: plan.dataOffset + skipBytes, dataBytes: plan.dataBytes - skipBytes, warnings: [] };
  const decoded = streamPcm(moved, async () => ByteReader.fromFile(await open(path, 'r'), sizeBytes, moved.dataOffset), options);
  return moved.layout.kind === 'float' ? replaceNonFinite(decoded) : decoded;
}

// ---- FLAC ----

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
  if (first.length < 42 || String.fromCharCode(...first.subarray(0, 4)) !== 'fLaC' || (first[4] & 0x7f) !== 0) return null;
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
        points.push({ sample: u32be(table, o) * 2 ** 32 + u32be(table, o + 4), offset: u32be(table, o + 8) * 2 ** 32 + u32be(table, o + 12) });
      }
    }
    at += 4 + length;
    if (h[0] & 0x80) { audioStart = at; break; }
  }
  if (audioStart === 0 || !maxBlock || !sampleRate) return null;
  return { start, streamInfo: si, audioStart, minBlock, maxBlock, maxFrameBytes, sampleRate, channels, bits, total, points };
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
  let extra = 0, value = lead;
  if (lead >= 0xfe) { extra = 6; value = 0; } else if (lead >= 0xfc) { extra = 5; value = lead & 1; } else if (lead >= 0xf8) { extra = 4; value = lead & 3; }
  else if (lead >= 0xf0) { extra = 3; value = lead & 7; } else if (lead >= 0xe0) { extra = 2; value = lead & 15; } else if (lead >= 0xc0) { extra = 1; value = lead & 31; }
  for (let k = 1; k <= extra; k++) {
    const c = b[o + 4 + k];
    if ((c & 0xc0) !== 0x80) return -1;
    value = value * 64 + (c & 63);
  }
  const variable = (b[o + 1] & 1) === 1;
  const sample = variable ? value : value * s.maxBlock;
  return sample < s.total ? sample : -1;
}

interface FoundFrame { offset: number; sample: number }

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
        if (flacHeaderBlockSize(b, p) !== 0 && frameSample(b, p, s) === next) return { offset: candidateFloor + o, sample };
      }
    }
    if (b.length < windowBytes) return null;
    candidateFloor += SCAN_WINDOW_BYTES;
  }
  return null;
}

const MAX_SEARCH_STEPS = 64;

/** The verified frame at or before `target` nearest to it that a bounded search finds. */
async function flacStartFrame(path: string, s: FlacStream, target: number, fileBytes: number): Promise<FoundFrame | null> {
  let lo = await findFrame(path, s, s.audioStart, fileBytes);
  if (!lo || lo.sample !== 0) return null;
  let hiOffset = fileBytes, hiSample = s.total;
  for (const p of s.points) {
    const offset = s.audioStart + p.offset;
    if (p.sample <= target && p.sample > lo.sample && offset < fileBytes) {
      const at = await findFrame(path, s, offset, offset + 1);
      if (at && at.sample === p.sample) lo = at;
    } else if (p.sample > target && p.sample < hiSample && offset > lo.offset) { hiOffset = offset; hiSample = p.sample; }
  }
  for (let step = 0; step < MAX_SEARCH_STEPS; step++) {
    if (target - lo.sample < s.maxBlock || hiOffset - lo.offset <= 1) break;
    // Interpolate by samples, every other step bisect by bytes: silence packs long spans into few bytes.
    const share = step % 2 === 0 && hiSample < Infinity ? (target - lo.sample) / (hiSample - lo.sample) : 0.5;
    const pos = Math.min(hiOffset - 1, Math.max(lo.offset + 1, Math.floor(lo.offset + share * (hiOffset - lo.offset))));
    // Every byte of the stream is inside a frame, so a real header follows `pos` within one frame's length: look no further.
    const found = await findFrame(path, s, pos, Math.min(hiOffset, pos + frameReach(s)));
    if (found && found.sample <= target && found.sample > lo.sample) lo = found;
    else if (found && found.sample > target) { hiOffset = found.offset; hiSample = Math.min(hiSample, found.sample); }
    else hiOffset = pos; // no frame starts in [pos, hiOffset)
  }
  return lo;
}

async function openFlacAt(path: string, frame: number, options: DecodeOptions, format: AudioFormat): Promise<SeekedAudio | null> {
  const s = await readFlacStream(path);
  if (!s || frame >= s.total) return null;
  const fileBytes = (await stat(path)).size;
  const start = await flacStartFrame(path, s, frame, fileBytes);
  if (!start || start.sample === 0) return null;
  const blockFrames = options.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES;
  // No declared length from here, so the frame-count verdicts stay quiet; output checks and the FLAC scale are the usual ones.
  const probe: Probe = { codec: 'flac', encoding: 'flac', sampleRate: s.sampleRate, channels: s.channels, bitsPerSample: s.bits,
    frames: null, framesSlack: 0, wholeFile: false, endMissing: null };
  const check = new OutputCheck(probe, blockFrames, [], Infinity);
  const header = s.streamInfo.slice();
  header[0] |= 0x80; // STREAMINFO becomes the last metadata block: the frames follow it
  const marker = new Uint8Array([0x66, 0x4c, 0x61, 0x43]);
  const blocks = decodeFrom(path, 'flac', concat(marker, header), start.offset, fileBytes, new FlacInputSlicer(s.channels), check);
  const audio: DecodedAudio = { format, blocks, warnings: [], get framesDecoded() { return check.framesOut; } };
  return { audio, firstFrame: start.sample, method: 'flac_frame' };
}

/** Decodes `prefix`, then the file from `offset` on, through `slicer` and `check`. */
async function* decodeFrom(path: string, codecName: 'flac' | 'mp3', prefix: Uint8Array | null, offset: number, fileBytes: number,
  slicer: { push(chunk: Uint8Array, last: boolean): Iterable<Uint8Array> }, check: OutputCheck): AsyncGenerator<PcmBlock> {
  const codec = await loadCodec(codecName);
  const stream = createReadStream(path, { start: offset, highWaterMark: INPUT_CHUNK_BYTES });
  try {
    if (prefix) yield* check.take(await codec.decode(prefix), false);
    let read = offset;
    for await (const chunk of stream as AsyncIterable<Buffer>) {
      read += chunk.byteLength;
      const last = read >= fileBytes;
      for (const slice of slicer.push(new Uint8Array(chunk), last)) yield* check.take(await codec.decode(slice), last);
    }
    if (codec.flush) yield* check.take(await codec.flush(), true);
    yield* check.finish();
  } catch (e) {
    if (e instanceof EarmarkError) throw e;
    throw new EarmarkError('corrupt_file', `decoder failed: ${e instanceof Error ? e.message : String(e)}`, {}, { cause: e });
  } finally {
    codec.free();
    stream.destroy();
  }
}

// ---- MP3 ----

/** Frames decoded before the span and thrown away: the bit reservoir reaches back up to 511 bytes and the filterbanks overlap. */
const MP3_PREROLL_FRAMES = 10;
const MAX_ID3_TAGS = 4;

/**
 * From the frame MP3_PREROLL_FRAMES before the one holding `frame`. Only for a stream that opens
 * with an Info/Xing frame carrying the LAME delay: the decoder then trims that delay from the
 * start, so sample n of the whole decode is sample n + delay of the frames after the Info frame.
 * The output differs from decoding from the start by about one float32 step (the decoder's
 * arithmetic is not quite position-independent).
 */
async function openMp3At(path: string, frame: number, options: DecodeOptions, format: AudioFormat): Promise<SeekedAudio | null> {
  const fileBytes = (await stat(path)).size;
  let first = 0;
  for (let i = 0; i < MAX_ID3_TAGS; i++) {
    const tag = id3v2Length(await readRange(path, first, 10));
    if (tag === 0) break;
    first += tag;
  }
  const head = await readRange(path, first, 4096);
  const info = parseMpegHeader(head, 0);
  if (!info || info.layer !== 3 || format.frames === null || frame >= format.frames) return null;
  const x = 4 + (info.mpeg1 ? (info.channels === 1 ? 17 : 32) : info.channels === 1 ? 9 : 17);
  const tag = String.fromCharCode(...head.subarray(x, x + 4));
  if (tag !== 'Xing' && tag !== 'Info') return null;
  const flags = u32be(head, x + 4);
  const lame = x + 8 + (flags & 1 ? 4 : 0) + (flags & 2 ? 4 : 0) + (flags & 4 ? 100 : 0) + (flags & 8 ? 4 : 0);
  if (lame + 24 > head.length || !/^[A-Za-z]{4}$/.test(String.fromCharCode(...head.subarray(lame, lame + 4)))) return null;
  // The tag's encoder delay plus the layer III decoder's own 529 samples (528 + 1, the usual gapless convention; checked against the whole decode in the tests).
  const delay = (u24be(head, lame + 21) >> 12) + 529;
  const spf = info.samplesPerFrame;
  // Audio frame k (1-based after the Info frame) holds samples from (k - 1) * spf - delay of the whole decode.
  const holding = Math.floor((frame + delay) / spf) + 1;
  const from = holding - MP3_PREROLL_FRAMES;
  if (from < 2) return null;
  const offset = await mp3FrameOffset(path, first + info.frameBytes, from - 1, fileBytes);
  if (offset === null) return null;
  const probe: Probe = { codec: 'mp3', encoding: format.encoding, sampleRate: format.sampleRate, channels: format.channels, bitsPerSample: null,
    frames: null, framesSlack: 0, wholeFile: false, endMissing: null };
  const check = new OutputCheck(probe, options.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES, [], Infinity);
  const firstFrame = (from - 1) * spf - delay;
  // From the middle the decoder cannot know the end padding the whole decode drops: stop at the declared length.
  const blocks = upTo(decodeFrom(path, 'mp3', null, offset, fileBytes, { push: (chunk) => [chunk] }, check), format.frames! - firstFrame);
  const audio: DecodedAudio = { format, blocks, warnings: [], get framesDecoded() { return check.framesOut; } };
  return { audio, firstFrame, method: 'mp3_frame' };
}

async function* upTo(blocks: AsyncIterable<PcmBlock>, frames: number): AsyncGenerator<PcmBlock> {
  let left = frames;
  for await (const block of blocks) {
    if (left <= 0) return;
    if (block.frames <= left) yield block;
    else yield { ...block, channelData: block.channelData.map((c) => c.subarray(0, left)), frames: left };
    left -= block.frames;
  }
}

/** Byte offset of the `skip`-th frame after the one at `at`, walking header to header; null if the chain breaks or ends first. */
async function mp3FrameOffset(path: string, at: number, skip: number, fileBytes: number): Promise<number | null> {
  const WINDOW = 1024 * 1024;
  let offset = at;
  let left = skip;
  while (left > 0) {
    const b = await readRange(path, offset, WINDOW);
    let o = 0;
    while (left > 0 && o + 4 <= b.length) {
      const h = parseMpegHeader(b, o);
      if (!h || h.frameBytes <= 4) return null;
      o += h.frameBytes;
      left--;
    }
    offset += o;
    if (left > 0 && (b.length < WINDOW || o === 0)) return null;
  }
  return offset + 4 <= fileBytes ? offset : null;
}

function concat(a: Uint8Array, b: Uint8Array): Uint8Array {
  const out = new Uint8Array(a.length + b.length);
  out.set(a);
  out.set(b, a.length);
  return out;
}
