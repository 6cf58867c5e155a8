// Fixed-width fields from byte arrays. Every name says its byte order: RIFF, Ogg and CAF-LE
// fields are little-endian, AIFF, MP4, FLAC, MPEG and CAF headers big-endian.

export const u16le = (b: Uint8Array, o: number): number => b[o] | (b[o + 1] << 8);
/** Two's-complement 16-bit. */
export const i16le = (b: Uint8Array, o: number): number => (u16le(b, o) << 16) >> 16;
export const u16be = (b: Uint8Array, o: number): number => (b[o] << 8) | b[o + 1];
export const u24be = (b: Uint8Array, o: number): number => (b[o] << 16) | (b[o + 1] << 8) | b[o + 2];
export const u32le = (b: Uint8Array, o: number): number =>
  (b[o] | (b[o + 1] << 8) | (b[o + 2] << 16)) + ((b[o + 3] << 24) >>> 0);
export const u32be = (b: Uint8Array, o: number): number =>
  ((b[o] << 24) >>> 0) + ((b[o + 1] << 16) | (b[o + 2] << 8) | b[o + 3]);
/** 64-bit as a JS number (exact below 2^53, which covers any real sample count or file size). */
export const u64le = (b: Uint8Array, o: number): number => u32le(b, o + 4) * 2 ** 32 + u32le(b, o);
export const u64be = (b: Uint8Array, o: number): number => u32be(b, o) * 2 ** 32 + u32be(b, o + 4);
/** Unsigned big-endian integer of `n` bytes (EBML element bodies). */
export const uintbe = (b: Uint8Array, o: number, n: number): number => {
  let v = 0;
  for (let i = 0; i < n; i++) v = v * 256 + b[o + i];
  return v;
};
export const f32be = (b: Uint8Array, o: number): number => new DataView(b.buffer, b.byteOffset + o, 4).getFloat32(0);
export const f64be = (b: Uint8Array, o: number): number => new DataView(b.buffer, b.byteOffset + o, 8).getFloat64(0);

/** `n` bytes as Latin-1 text (fewer at the end of `b`). */
export const ascii = (b: Uint8Array, o: number, n: number): string => String.fromCharCode(...b.subarray(o, o + n));
/** A four-character chunk or box id. */
export const fourcc = (b: Uint8Array, o: number): string => String.fromCharCode(b[o], b[o + 1], b[o + 2], b[o + 3]);

/** Whether `b` holds the ASCII `text` at `o` (false when `b` ends first). */
export function hasAscii(b: Uint8Array, o: number, text: string): boolean {
  if (b.length < o + text.length) return false;
  for (let i = 0; i < text.length; i++) if (b[o + i] !== text.charCodeAt(i)) return false;
  return true;
}

/**
 * Total length of an ID3v2 tag at `o` (10-byte header + body + 10-byte footer when flag bit 4 is
 * set), or 0 when there is no valid one: version 2 to 4 and a 28-bit synchsafe size, each of its
 * 4 bytes below 0x80 (ID3v2.4 main structure, section 3.1, from memory).
 */
export function id3v2Length(b: Uint8Array, o = 0): number {
  if (b.length < o + 10 || !hasAscii(b, o, 'ID3')) return 0;
  const major = b[o + 3];
  if (major < 2 || major > 4 || b[o + 4] === 0xff) return 0;
  for (let i = o + 6; i < o + 10; i++) if (b[i] & 0x80) return 0;
  const bodyBytes = (b[o + 6] << 21) | (b[o + 7] << 14) | (b[o + 8] << 7) | b[o + 9];
  const footerBytes = b[o + 5] & 0x10 ? 10 : 0;
  return 10 + bodyBytes + footerBytes;
}
