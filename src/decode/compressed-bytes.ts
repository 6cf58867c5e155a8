// Small byte helpers shared by the container probes.
import { open } from 'node:fs/promises';

/** Reads up to `length` bytes at `position` (fewer at end of file) into a fresh Uint8Array. */
export async function readRange(path: string, position: number, length: number): Promise<Uint8Array> {
  const handle = await open(path, 'r');
  try {
    const out = new Uint8Array(Math.max(0, length));
    let filled = 0;
    while (filled < out.length) {
      const { bytesRead } = await handle.read(out, filled, out.length - filled, position + filled);
      if (bytesRead === 0) break;
      filled += bytesRead;
    }
    return out.subarray(0, filled);
  } finally {
    await handle.close();
  }
}

export const u16be = (b: Uint8Array, o: number): number => (b[o] << 8) | b[o + 1];
export const u24be = (b: Uint8Array, o: number): number => (b[o] << 16) | (b[o + 1] << 8) | b[o + 2];
export const u32be = (b: Uint8Array, o: number): number => ((b[o] << 24) >>> 0) + ((b[o + 1] << 16) | (b[o + 2] << 8) | b[o + 3]);
export const u16le = (b: Uint8Array, o: number): number => b[o] | (b[o + 1] << 8);
export const u32le = (b: Uint8Array, o: number): number => (b[o] | (b[o + 1] << 8) | (b[o + 2] << 16)) + ((b[o + 3] << 24) >>> 0);
/** 64-bit big-endian as a JS number (exact below 2^53, which covers any real sample count). */
export const u64be = (b: Uint8Array, o: number): number => u32be(b, o) * 2 ** 32 + u32be(b, o + 4);
export const u64le = (b: Uint8Array, o: number): number => u32le(b, o + 4) * 2 ** 32 + u32le(b, o);
export const ascii = (b: Uint8Array, o: number, n: number): string => String.fromCharCode(...b.subarray(o, o + n));

/** Length of an ID3v2 tag at `o` (header + body + footer), 0 when there is none. */
export function id3v2Length(b: Uint8Array, o = 0): number {
  if (b.length < o + 10 || ascii(b, o, 3) !== 'ID3') return 0;
  const size = ((b[o + 6] & 0x7f) << 21) | ((b[o + 7] & 0x7f) << 14) | ((b[o + 8] & 0x7f) << 7) | (b[o + 9] & 0x7f);
  const footer = b[o + 5] & 0x10 ? 10 : 0;
  return 10 + size + footer;
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
