// MP3 from part-way through: for a stream with a LAME/Info header (so the decoder's trim is
// known), from a few frames before the span, found by walking the frame headers.
import { stat } from 'node:fs/promises';
import type { PcmBlock } from '../analysis/audio.ts';
import { readRange } from './byte-reader.ts';
import { ascii, id3v2Length, u24be, u32be } from './bytes.ts';
import { decodeFrom, WHOLE_CHUNKS } from './compressed.ts';
import { parseMpegHeader } from './compressed-mp3.ts';
import { OutputCheck } from './compressed-output.ts';
import type { Probe } from './compressed-probe.ts';
import {
  DEFAULT_MAX_BLOCK_FRAMES,
  type AudioFormat,
  type DecodedAudio,
  type DecodeOptions,
  type SeekedAudio,
} from './types.ts';

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
export async function openMp3At(
  path: string,
  frame: number,
  options: DecodeOptions,
  format: AudioFormat,
): Promise<SeekedAudio | null> {
  const fileBytes = (await stat(path)).size;
  let first = 0;
  for (let i = 0; i < MAX_ID3_TAGS; i++) {
    const tag = id3v2Length(await readRange(path, first, 10));
    if (tag === 0) break;
    first += tag;
  }
  const head = await readRange(path, first, 4096);
  const info = parseMpegHeader(head, 0);
  if (info?.layer !== 3 || format.frames === null || frame >= format.frames) return null;
  const x = 4 + (info.mpeg1 ? (info.channels === 1 ? 17 : 32) : info.channels === 1 ? 9 : 17);
  const tag = ascii(head, x, 4);
  if (tag !== 'Xing' && tag !== 'Info') return null;
  const flags = u32be(head, x + 4);
  const lame = x + 8 + (flags & 1 ? 4 : 0) + (flags & 2 ? 4 : 0) + (flags & 4 ? 100 : 0) + (flags & 8 ? 4 : 0);
  if (lame + 24 > head.length || !/^[A-Za-z]{4}$/.test(ascii(head, lame, 4))) return null;
  // The tag's encoder delay plus the layer III decoder's own 529 samples (528 + 1, the usual gapless convention; checked against the whole decode in the tests).
  const delay = (u24be(head, lame + 21) >> 12) + 529;
  const spf = info.samplesPerFrame;
  // Audio frame k (1-based after the Info frame) holds samples from (k - 1) * spf - delay of the whole decode.
  const holding = Math.floor((frame + delay) / spf) + 1;
  const from = holding - MP3_PREROLL_FRAMES;
  if (from < 2) return null;
  const offset = await mp3FrameOffset(path, first + info.frameBytes, from - 1, fileBytes);
  if (offset === null) return null;
  const probe: Probe = {
    codec: 'mp3',
    encoding: format.encoding,
    sampleRate: format.sampleRate,
    channels: format.channels,
    bitsPerSample: null,
    frames: null,
    framesSlack: 0,
    wholeFile: false,
    endMissing: null,
  };
  const check = new OutputCheck(probe, options.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES, [], Infinity);
  const firstFrame = (from - 1) * spf - delay;
  // From the middle the decoder cannot know the end padding the whole decode drops: stop at the declared length.
  const blocks = upTo(
    decodeFrom(path, 'mp3', null, offset, fileBytes, WHOLE_CHUNKS, check),
    format.frames - firstFrame,
  );
  const audio: DecodedAudio = {
    format,
    blocks,
    warnings: [],
    get framesDecoded() {
      return check.framesOut;
    },
  };
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
