// Our native FLAC decoder behind the Codec interface (compressed-codecs.ts): streams the bytes the
// slicer gives, metadata skipped without holding it, frames decoded as they complete.
//
// Output is integer / 2^(bits-1), the value OutputCheck's requantization gives for the package's
// output, so OutputCheck takes it as it is (exactScale). A frame whose CRC-16 fails, or whose
// content is invalid, is dropped and reported once per damaged run, like bytes between frames
// that are no frame; the search resumes at the next valid header. Bytes that end the input inside
// a frame are a cut file: dropped without an error (the frame count tells, as with the package).
import type { Codec, CodecOutput } from '../compressed-codecs.ts';
import { FlacFrameDecoder, FRAME_BAD, FRAME_INCOMPLETE, frameHeaderBytes, OVERRUN_BYTES } from './frame.ts';

/** A frame longer than this is damage (8 channels of 65535 33-bit samples take 2.2 MB). */
export const MAX_FRAME_BYTES = 4 * 1024 * 1024;

const SAMPLE_BITS = [0, 8, 12, 0, 16, 20, 24, 32];

type Phase = 'head' | 'meta' | 'frames';

export class FlacCodec implements Codec {
  private buf = new Uint8Array(64 * 1024 + OVERRUN_BYTES);
  private start = 0;
  private len = 0;
  private phase: Phase = 'head';
  private skipBytes = 0;
  private readonly defaults = { sampleRate: 0, bits: 0 };
  private channels = 0;
  private readonly frame = new FlacFrameDecoder(this.defaults);
  private seenFrame = false;
  /** An error was reported for the damage being skipped now; cleared by the next good frame. */
  private damaged = false;
  /** Bytes skipped since the last frame that were no frame, not yet reported. */
  private junkBytes = 0;
  private junkIsTag = false;
  private out: Float32Array[] = [];
  private outFrames = 0;
  private sampleRate = 0;
  private errors: { message: string }[] = [];
  private framesBefore = 0;
  /** A sample of this output is beyond full scale (a damaged stream whose CRC still matched). */
  private overFullScale = false;

  decode(data: Uint8Array): CodecOutput {
    this.append(data);
    this.run(false);
    return this.output();
  }

  flush(): CodecOutput {
    this.run(true);
    if (this.junkBytes > 0 && !(this.junkIsTag && this.junkBytes === 128)) this.reportJunk();
    this.start = this.len = 0;
    return this.output();
  }

  free(): void {
    this.buf = new Uint8Array(0);
    this.out = [];
  }

  private append(data: Uint8Array): void {
    const keep = this.len - this.start;
    const need = keep + data.length + OVERRUN_BYTES;
    if (need > this.buf.length) {
      const grown = new Uint8Array(Math.max(need, this.buf.length * 2));
      grown.set(this.buf.subarray(this.start, this.len));
      this.buf = grown;
    } else if (this.start > 0) this.buf.copyWithin(0, this.start, this.len);
    this.start = 0;
    this.len = keep;
    this.buf.set(data, this.len);
    this.len += data.length;
  }

  private run(final: boolean): void {
    const b = this.buf;
    for (;;) {
      if (this.skipBytes > 0) {
        const n = Math.min(this.skipBytes, this.len - this.start);
        this.start += n;
        this.skipBytes -= n;
        if (this.skipBytes > 0) return;
      }
      const avail = this.len - this.start;
      const s = this.start;
      if (this.phase === 'head') {
        if (avail < 10 && !final) return;
        if (avail >= 10 && b[s] === 0x49 && b[s + 1] === 0x44 && b[s + 2] === 0x33) {
          // ID3v2 before the stream: syncsafe size, plus a footer when flagged.
          const size =
            ((b[s + 6] & 0x7f) << 21) | ((b[s + 7] & 0x7f) << 14) | ((b[s + 8] & 0x7f) << 7) | (b[s + 9] & 0x7f);
          this.skipBytes = 10 + size + (b[s + 5] & 0x10 ? 10 : 0);
          continue;
        }
        if (avail >= 4 && b[s] === 0x66 && b[s + 1] === 0x4c && b[s + 2] === 0x61 && b[s + 3] === 0x43) {
          this.start += 4;
          this.phase = 'meta';
        } else this.phase = 'frames';
        continue;
      }
      if (this.phase === 'meta') {
        if (avail < 4) {
          if (final) this.phase = 'frames';
          return;
        }
        const type = b[s] & 0x7f;
        const length = (b[s + 1] << 16) | (b[s + 2] << 8) | b[s + 3];
        if (type === 0 && length >= 34) {
          if (avail < 4 + 34) {
            if (final) this.phase = 'frames';
            return;
          }
          this.streamInfo(b, s + 4);
        }
        if (b[s] & 0x80) this.phase = 'frames';
        this.start += 4;
        this.skipBytes = length;
        continue;
      }
      if (!this.frames(final)) return;
    }
  }

  /** STREAMINFO's rate, channels and depth (RFC 9639 section 8.2). */
  private streamInfo(b: Uint8Array, o: number): void {
    this.defaults.sampleRate = (b[o + 10] << 12) | (b[o + 11] << 4) | (b[o + 12] >> 4);
    this.channels = ((b[o + 12] >> 1) & 7) + 1;
    this.defaults.bits = (((b[o + 12] & 1) << 4) | (b[o + 13] >> 4)) + 1;
  }

  /** Whether the header at `o` fits this stream: channels and depth as declared. */
  private fits(b: Uint8Array, o: number): boolean {
    const assignment = b[o + 3] >> 4;
    const channels = assignment < 8 ? assignment + 1 : 2;
    if (this.channels && channels !== this.channels) return false;
    const bitsCode = (b[o + 3] >> 1) & 7;
    if (bitsCode === 0) return this.defaults.bits > 0;
    return !this.defaults.bits || SAMPLE_BITS[bitsCode] === this.defaults.bits;
  }

  /** Decodes frames from `start`; false when it needs more input (or, when final, has none). */
  private frames(final: boolean): boolean {
    const b = this.buf;
    const end = this.len;
    // Headers are at most 16 bytes: when more may come, leave a possible header near the end for later.
    const searchEnd = final ? end : end - 15;
    let o = this.start;
    while (o < searchEnd && !(b[o] === 0xff && frameHeaderBytes(b, o, end) > 0 && this.fits(b, o))) {
      // The slack after `end` holds stale bytes: a hit there is no hit.
      o = b.indexOf(0xff, o + 1);
      if (o < 0 || o > end) o = end;
    }
    if (o > this.start) this.skipJunk(o);
    if (o >= searchEnd) {
      if (final) this.skipJunk(end);
      return false;
    }
    const r = this.frame.decode(b, o, end);
    if (r === FRAME_INCOMPLETE && !(end - o > MAX_FRAME_BYTES)) {
      // A cut file: the last frame's bytes end early. Nothing to report (the frame count tells).
      if (final) this.start = end;
      return false;
    }
    if (r === FRAME_BAD || r === FRAME_INCOMPLETE) {
      this.reportJunk();
      this.damage(r === FRAME_BAD ? this.frame.problem : 'frame longer than any valid frame');
      this.start = o + 1;
      return true;
    }
    this.reportJunk();
    this.emit();
    this.damaged = false;
    this.seenFrame = true;
    this.start = this.frame.frameEnd;
    return true;
  }

  /** Bytes up to `to` are no frame: counted (an ID3v1 tag after the last frame is no damage). */
  private skipJunk(to: number): void {
    const s = this.start;
    if (this.seenFrame && to > s) {
      if (this.junkBytes === 0)
        this.junkIsTag = this.buf[s] === 0x54 && this.buf[s + 1] === 0x41 && this.buf[s + 2] === 0x47;
      this.junkBytes += to - s;
    }
    this.start = to;
  }

  private reportJunk(): void {
    if (this.junkBytes === 0) return;
    this.damage(`${this.junkBytes} bytes that are no FLAC frame`);
    this.junkBytes = 0;
  }

  private damage(problem: string): void {
    if (this.damaged) return;
    this.damaged = true;
    this.errors.push({ message: `FLAC frame at sample ${this.framesBefore + this.outFrames}: ${problem}` });
  }

  private emit(): void {
    const f = this.frame;
    const n = f.blockSize;
    if (!this.channels) this.channels = f.channelCount;
    const at = this.outFrames;
    if (this.out.length !== f.channelCount)
      this.out = Array.from({ length: f.channelCount }, () => new Float32Array(0));
    const scale = 2 ** -(f.bits - 1);
    for (let c = 0; c < f.channelCount; c++) {
      if (this.out[c].length < at + n) {
        const grown = new Float32Array(Math.max(at + n, this.out[c].length * 2, 16384));
        grown.set(this.out[c].subarray(0, at));
        this.out[c] = grown;
      }
    }
    // |sample| (less one when negative) ORed: under 2^(bits-1) means every sample within full scale.
    let magnitudes = 0;
    if (f.assignment >= 8)
      magnitudes = stereoOut(f.channels[0], f.channels[1], f.assignment, n, this.out[0], this.out[1], at, scale);
    else
      for (let c = 0; c < f.channelCount; c++) {
        const x = f.channels[c];
        const o = this.out[c];
        for (let i = 0; i < n; i++) {
          const v = x[i];
          magnitudes |= v ^ (v >> 31);
          o[at + i] = v * scale;
        }
      }
    if (magnitudes >= 2 ** (f.bits - 1)) this.overFullScale = true;
    this.outFrames = at + n;
    this.sampleRate = f.sampleRate;
  }

  private output(): CodecOutput {
    const frames = this.outFrames;
    const errors = this.errors;
    const over = this.overFullScale;
    this.overFullScale = false;
    this.framesBefore += frames;
    this.outFrames = 0;
    this.errors = [];
    return {
      channelData: frames ? this.out.map((c) => c.subarray(0, frames)) : [],
      sampleRate: this.sampleRate || this.defaults.sampleRate,
      samplesDecoded: frames,
      errors,
      exactScale: true,
      withinFullScale: !over,
    };
  }
}

/**
 * Undoes the stereo coding (RFC 9639 section 4.2) while writing the scaled output: one pass over
 * the pair. Returns the ORed magnitudes (see emit).
 */
function stereoOut(
  a: Int32Array,
  b: Int32Array,
  assignment: number,
  n: number,
  left: Float32Array,
  right: Float32Array,
  at: number,
  scale: number,
): number {
  let m = 0;
  if (assignment === 8) {
    // left, side: right = left - side
    for (let i = 0; i < n; i++) {
      const l = a[i];
      const r = (l - b[i]) | 0;
      m |= (l ^ (l >> 31)) | (r ^ (r >> 31));
      left[at + i] = l * scale;
      right[at + i] = r * scale;
    }
  } else if (assignment === 9) {
    // side, right: left = side + right
    for (let i = 0; i < n; i++) {
      const r = b[i];
      const l = (a[i] + r) | 0;
      m |= (l ^ (l >> 31)) | (r ^ (r >> 31));
      left[at + i] = l * scale;
      right[at + i] = r * scale;
    }
  } else {
    // mid, side
    for (let i = 0; i < n; i++) {
      const side = b[i];
      const mid = (a[i] << 1) | (side & 1);
      const l = (mid + side) >> 1;
      const r = (mid - side) >> 1;
      m |= (l ^ (l >> 31)) | (r ^ (r >> 31));
      left[at + i] = l * scale;
      right[at + i] = r * scale;
    }
  }
  return m;
}
