// Native FLAC input, cut into the slices the decoder (flac/codec.ts) is given one decode() call at
// a time.
//
// Two reasons; the first was the decoder package's, which native FLAC no longer uses (our decoder
// holds a cut frame until its bytes are all there), and costs nothing to keep. The package's frame splitter tests for the next frame header once, with the bytes
// it holds: a header cut by the end of one decode() input fails that test for want of bytes, its
// running CRC-16 moves past the sync code, and the next call never looks there again, so two
// frames reach libFLAC as one and the second one's samples are lost (a 6-hour silent file lost
// 4 frames, one at each of the 4 of its 14 256-KiB input boundaries that fell inside a header).
// A slice here therefore never ends within the longest header's reach of a possible sync code.
// And digital silence codes a 4608-frame FLAC frame in about 17 bytes: 256 KiB of input is
// 25 minutes, 600 MB of float output from one call. A slice here holds a bounded number of samples.

/** Longest frame header: sync and codes 4, coded number up to 7, block size 2, rate 2, CRC-8 1 (RFC 9639 section 9.1). */
export const FLAC_MAX_HEADER_BYTES = 16;
/** Decoded samples (all channels) one slice may hold: 8 MiB as float32. */
export const FLAC_SLICE_SAMPLES = 2 ** 21;

const CRC8_TABLE = Uint8Array.from({ length: 256 }, (_, i) => {
  let c = i;
  for (let k = 0; k < 8; k++) c = c & 0x80 ? ((c << 1) ^ 0x07) & 0xff : (c << 1) & 0xff;
  return c;
});

/**
 * Block size of the frame header at `o` (sync, valid codes, CRC-8 over the header, RFC 9639
 * section 9.1), or 0 when there is none or it does not fit in `b`.
 */
export function flacHeaderBlockSize(b: Uint8Array, o: number): number {
  if (o + 5 > b.length || b[o] !== 0xff || (b[o + 1] & 0xfe) !== 0xf8) return 0;
  const sizeCode = b[o + 2] >> 4;
  const rateCode = b[o + 2] & 15;
  if (sizeCode === 0 || rateCode === 15 || b[o + 3] >> 4 > 10 || (b[o + 3] & 1) !== 0) return 0;
  const lead = b[o + 4];
  const extra =
    lead < 0x80
      ? 0
      : lead < 0xc0
        ? -1
        : lead < 0xe0
          ? 1
          : lead < 0xf0
            ? 2
            : lead < 0xf8
              ? 3
              : lead < 0xfc
                ? 4
                : lead < 0xfe
                  ? 5
                  : lead === 0xfe
                    ? 6
                    : -1;
  if (extra < 0) return 0;
  const sizeAt = o + 5 + extra;
  const crcAt =
    sizeAt +
    (sizeCode === 6 ? 1 : sizeCode === 7 ? 2 : 0) +
    (rateCode === 12 ? 1 : rateCode === 13 || rateCode === 14 ? 2 : 0);
  if (crcAt >= b.length) return 0;
  let crc = 0;
  for (let i = o; i < crcAt; i++) crc = CRC8_TABLE[crc ^ b[i]];
  if (crc !== b[crcAt]) return 0;
  if (sizeCode === 1) return 192;
  if (sizeCode <= 5) return 576 << (sizeCode - 2);
  if (sizeCode === 6) return b[sizeAt] + 1;
  if (sizeCode === 7) return ((b[sizeAt] << 8) | b[sizeAt + 1]) + 1;
  return 256 << (sizeCode - 8);
}

/**
 * Cuts a native FLAC byte stream into decoder inputs. Every cut is made just before a byte that
 * may start a frame header, so a real header is never split; a cut before a false sync inside
 * frame data is harmless (the decoder joins its inputs). Slices hold at most about
 * `maxSamples` decoded samples (by the block sizes of the headers in them); up to 15 bytes at the
 * end of a chunk are held back for the next one.
 */
export class FlacInputSlicer {
  private carry: Uint8Array | null = null;
  /** Frames (per channel) whose headers are in the slice being built. */
  private sliceFrames = 0;
  private readonly maxFrames: number;

  constructor(channels: number, maxSamples = FLAC_SLICE_SAMPLES) {
    this.maxFrames = Math.max(1, Math.floor(maxSamples / Math.max(1, channels)));
  }

  /** The slices of `chunk` (after the bytes held back) in order; `last`: no input follows, hold nothing back. */
  *push(chunk: Uint8Array, last: boolean): Generator<Uint8Array> {
    let data = chunk;
    if (this.carry) {
      data = new Uint8Array(this.carry.length + chunk.length);
      data.set(this.carry);
      data.set(chunk, this.carry.length);
      this.carry = null;
    }
    // Headers wholly inside `data` can be read; a possible sync in the last 15 bytes is held back.
    const readable = last ? data.length : data.length - (FLAC_MAX_HEADER_BYTES - 1);
    let from = 0;
    for (let o = data.indexOf(0xff); o >= 0 && o < readable; o = data.indexOf(0xff, o + 1)) {
      const frames = flacHeaderBlockSize(data, o);
      if (frames === 0) continue;
      if (this.sliceFrames + frames > this.maxFrames && o > from) {
        yield data.subarray(from, o);
        from = o;
        this.sliceFrames = 0;
      }
      this.sliceFrames += frames;
    }
    let end = data.length;
    if (!last) {
      for (let o = Math.max(from, readable); o < data.length; o++) {
        if (data[o] === 0xff && (o + 1 === data.length || (data[o + 1] & 0xfe) === 0xf8)) {
          end = o;
          break;
        }
      }
      if (end < data.length) this.carry = data.slice(end);
    }
    if (end > from) yield data.subarray(from, end);
  }
}
