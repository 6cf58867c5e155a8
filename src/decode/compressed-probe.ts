// What a compressed container declares before any decoding (Probe), used to fill AudioFormat and
// to check the decoder's output (channel count, rate, frame count); helpers the formats share.
import { readRange } from './byte-reader.ts';
import { ascii } from './bytes.ts';
import type { CodecPackage } from './compressed-codecs.ts';
import type { Mp4Layout } from './compressed-mp4.ts';

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

/** Bytes a probe reads at the start of the file (or of its audio, after a tag). */
const HEAD_BYTES = 1024 * 1024;
const TAIL_BYTES = 65536;

export function readHead(path: string, from = 0): Promise<Uint8Array> {
  return readRange(path, from, HEAD_BYTES);
}

export function readTail(path: string, fileBytes: number): Promise<Uint8Array> {
  return readRange(path, Math.max(0, fileBytes - TAIL_BYTES), TAIL_BYTES);
}

/**
 * Whether a stream of self-delimiting frames (ADTS, MPEG audio) was cut, from the last bytes of
 * the file: from the first place in `tail` where three frames follow one another, walk the
 * frames. true: the last frame runs past the end (its header declares more bytes than are left);
 * false: the frames end exactly at the end, or before a 128-byte ID3v1 tag; null: no such chain,
 * or bytes that are no frame after the last one (left to the decoder). `frameBytesAt` returns a
 * frame's declared length at `o`, 0 when no header is there (or it does not fit).
 */
export function frameChainCut(tail: Uint8Array, frameBytesAt: (b: Uint8Array, o: number) => number): boolean | null {
  const end = tail.length;
  for (let o = 0; o + 4 <= end; o++) {
    let p = o;
    let frames = 0;
    for (let bytes = frameBytesAt(tail, p); bytes > 0; bytes = frameBytesAt(tail, p)) {
      p += bytes;
      frames++;
      if (p >= end) break;
    }
    if (frames < 3) continue;
    if (p > end) return true;
    if (p === end) return false;
    if (end - p === 128 && ascii(tail, p, 3) === 'TAG') return false;
    // A header too short to read: the cut fell inside it.
    return end - p < 8 && tail[p] === 0xff ? true : null;
  }
  return null;
}

/** A valid frame at `offset`, and a second one right after it whenever `head` reaches that far. */
export function framedStream(
  head: Uint8Array,
  offset: number,
  frameBytes: (h: Uint8Array, o: number) => number,
): boolean {
  const first = frameBytes(head, offset);
  if (first === 0) return false;
  const next = offset + first;
  if (head.length < next + 4) return true;
  return frameBytes(head, next) > 0;
}
