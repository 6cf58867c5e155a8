// One FLAC frame (RFC 9639 section 9) into Int32Array channel buffers reused across frames.
//
// Reads from a byte buffer that has at least OVERRUN_BYTES of slack after the valid bytes: the hot
// loops never test for the end, the decoder checks after each partition and subframe whether it
// has read past `end`, and then reports the frame incomplete (the caller waits for more input).
import { CRC8_TABLE, crc16 } from './crc.ts';
import { lpcLoop } from './lpc.ts';

/**
 * Slack after the valid bytes: one partition's worst overrun in the Rice loop's fast path (65535
 * samples of at most 49 bits: 402 KB); its slow path stops once past the end.
 */
export const OVERRUN_BYTES = 512 * 1024;

export const FRAME_OK = 0;
export const FRAME_INCOMPLETE = 1;
export const FRAME_BAD = 2;
export type FrameResult = typeof FRAME_OK | typeof FRAME_INCOMPLETE | typeof FRAME_BAD;

/** What the stream declares (STREAMINFO), for header codes that refer to it; 0 = unknown. */
export interface StreamDefaults {
  sampleRate: number;
  bits: number;
}

const RATES = [0, 88200, 176400, 192000, 8000, 16000, 22050, 24000, 32000, 44100, 48000, 96000];
const SAMPLE_BITS = [0, 8, 12, 0, 16, 20, 24, 32];

/** Length in bytes of the header at `o` with its CRC-8 checked (RFC 9639 section 9.1), or 0. */
export function frameHeaderBytes(b: Uint8Array, o: number, end: number): number {
  if (o + 6 > end || b[o] !== 0xff || (b[o + 1] & 0xfe) !== 0xf8) return 0;
  const sizeCode = b[o + 2] >> 4;
  const rateCode = b[o + 2] & 15;
  const assignment = b[o + 3] >> 4;
  if (sizeCode === 0 || rateCode === 15 || assignment > 10 || (b[o + 3] & 1) !== 0 || ((b[o + 3] >> 1) & 7) === 3)
    return 0;
  const extra = codedNumberExtra(b[o + 4]);
  if (extra < 0) return 0;
  const crcAt =
    o +
    5 +
    extra +
    (sizeCode === 6 ? 1 : sizeCode === 7 ? 2 : 0) +
    (rateCode === 12 ? 1 : rateCode === 13 || rateCode === 14 ? 2 : 0);
  if (crcAt >= end) return 0;
  let crc = 0;
  for (let i = o; i < crcAt; i++) crc = CRC8_TABLE[crc ^ b[i]];
  return crc === b[crcAt] ? crcAt + 1 - o : 0;
}

/** Bytes after the lead byte of the UTF-8-style coded number (RFC 9639 section 9.1.5), or -1. */
function codedNumberExtra(lead: number): number {
  if (lead < 0x80) return 0;
  if (lead < 0xc0) return -1;
  if (lead < 0xe0) return 1;
  if (lead < 0xf0) return 2;
  if (lead < 0xf8) return 3;
  if (lead < 0xfc) return 4;
  if (lead < 0xfe) return 5;
  return lead === 0xfe ? 6 : -1;
}

export class FlacFrameDecoder {
  /**
   * Per channel, the frame's subframes: for assignments 8 to 10 (RFC 9639 section 4.2) the
   * stereo pair still coded as left/side, side/right or mid/side (the caller undoes it in the
   * pass that writes its output, codec.ts).
   */
  readonly channels: Int32Array[] = [];
  // The frame just decoded.
  blockSize = 0;
  channelCount = 0;
  /** Channel assignment code: 0 to 7 independent channels, 8 to 10 a coded stereo pair. */
  assignment = 0;
  bits = 0;
  sampleRate = 0;
  /** Byte offset just past the frame (its CRC-16) after FRAME_OK. */
  frameEnd = 0;
  /** Why the last frame was bad. */
  problem = '';

  private buf: Uint8Array = new Uint8Array(0);
  /** Over `buf`: one big-endian 32-bit load where the Rice loop would take four byte loads. */
  private view: DataView = new DataView(new ArrayBuffer(0));
  private pos = 0; // bit position in buf
  private endBits = 0;
  private readonly coefs = new Int32Array(32);

  constructor(private readonly defaults: StreamDefaults) {}

  /** Decodes the frame whose header starts at byte `o`; valid bytes end at `end`, slack follows. */
  decode(b: Uint8Array, o: number, end: number): FrameResult {
    if (b !== this.buf) {
      this.buf = b;
      this.view = new DataView(b.buffer, b.byteOffset, b.byteLength);
    }
    this.endBits = end * 8;
    this.pos = o * 8;
    const headerBytes = frameHeaderBytes(b, o, end);
    if (headerBytes === 0) return end - o < 16 ? FRAME_INCOMPLETE : this.bad('frame header invalid');
    const sizeCode = b[o + 2] >> 4;
    const rateCode = b[o + 2] & 15;
    const assignment = b[o + 3] >> 4;
    const bitsCode = (b[o + 3] >> 1) & 7;
    let p = o + 5 + codedNumberExtra(b[o + 4]);
    // Block size and rate from the header's tail (RFC 9639 sections 9.1.1, 9.1.2, 9.1.6, 9.1.7).
    let blockSize: number;
    if (sizeCode === 1) blockSize = 192;
    else if (sizeCode <= 5) blockSize = 576 << (sizeCode - 2);
    else if (sizeCode === 6) blockSize = b[p++] + 1;
    else if (sizeCode === 7) {
      blockSize = ((b[p] << 8) | b[p + 1]) + 1;
      p += 2;
    } else blockSize = 256 << (sizeCode - 8);
    let sampleRate: number;
    if (rateCode === 0) sampleRate = this.defaults.sampleRate;
    else if (rateCode < 12) sampleRate = RATES[rateCode];
    else if (rateCode === 12) sampleRate = b[p] * 1000;
    else if (rateCode === 13) sampleRate = (b[p] << 8) | b[p + 1];
    else sampleRate = ((b[p] << 8) | b[p + 1]) * 10;
    const bits = bitsCode === 0 ? this.defaults.bits : SAMPLE_BITS[bitsCode];
    if (blockSize > 65535) return this.bad('block size over 65535');
    if (bits < 4 || bits > 32) return this.bad('sample size unknown');
    const channelCount = assignment < 8 ? assignment + 1 : 2;
    this.blockSize = blockSize;
    this.channelCount = channelCount;
    this.bits = bits;
    this.sampleRate = sampleRate;
    while (this.channels.length < channelCount) this.channels.push(new Int32Array(65536));

    this.pos = (o + headerBytes) * 8;
    for (let c = 0; c < channelCount; c++) {
      // The side channel carries one bit more (RFC 9639 section 9.2.1).
      const side = (assignment === 8 && c === 1) || (assignment === 9 && c === 0) || (assignment === 10 && c === 1);
      const r = this.subframe(this.channels[c], blockSize, side ? bits + 1 : bits);
      if (r !== FRAME_OK) return r;
    }
    // Zero padding to the byte, then the CRC-16 of everything before it (RFC 9639 section 9.3).
    const crcAt = (this.pos + 7) >>> 3;
    if (crcAt + 2 > end) return FRAME_INCOMPLETE;
    if (crc16(b, o, crcAt) !== ((b[crcAt] << 8) | b[crcAt + 1])) return this.bad('frame CRC-16 mismatch');
    this.frameEnd = crcAt + 2;
    this.assignment = assignment;
    return FRAME_OK;
  }

  private bad(problem: string): FrameResult {
    // Past the valid bytes the decoder read stale slack: the frame is not bad, just not all here.
    if (this.pos > this.endBits) return FRAME_INCOMPLETE;
    this.problem = problem;
    return FRAME_BAD;
  }

  private subframe(x: Int32Array, n: number, sampleBits: number): FrameResult {
    if (this.readBits(1) !== 0) return this.bad('subframe padding bit set');
    const type = this.readBits(6);
    let wasted = 0;
    if (this.readBits(1) === 1) {
      wasted = 1 + this.readUnary(sampleBits);
      if (wasted >= sampleBits) return this.pos > this.endBits ? FRAME_INCOMPLETE : this.bad('wasted bits too many');
    }
    const bits = sampleBits - wasted;
    if (bits > 32) return this.bad('33-bit side channel not supported');
    let r: FrameResult;
    if (type === 0) {
      x.fill(this.readSigned(bits), 0, n);
      r = FRAME_OK;
    } else if (type === 1) {
      for (let i = 0; i < n; i++) x[i] = this.readSigned(bits);
      r = FRAME_OK;
    } else if (type >= 8 && type <= 12) r = this.fixed(x, n, bits, type - 8);
    else if (type >= 32) r = this.lpc(x, n, bits, type - 31);
    else r = this.bad('reserved subframe type');
    if (r !== FRAME_OK) return r;
    if (this.pos > this.endBits) return FRAME_INCOMPLETE;
    if (wasted) for (let i = 0; i < n; i++) x[i] <<= wasted;
    return FRAME_OK;
  }

  private fixed(x: Int32Array, n: number, bits: number, order: number): FrameResult {
    if (order > n) return this.bad('predictor order over block size');
    for (let i = 0; i < order; i++) x[i] = this.readSigned(bits);
    const r = this.residual(x, n, order);
    if (r !== FRAME_OK) return r;
    // Wrapping 32-bit arithmetic gives the exact sample whenever the sample fits 32 bits, as it must.
    switch (order) {
      case 1:
        for (let i = 1; i < n; i++) x[i] = (x[i] + x[i - 1]) | 0;
        break;
      case 2: {
        let a = x[0];
        let b = x[1];
        for (let i = 2; i < n; i++) {
          const s = (x[i] + 2 * b - a) | 0;
          x[i] = s;
          a = b;
          b = s;
        }
        break;
      }
      case 3: {
        let a = x[0];
        let b = x[1];
        let c = x[2];
        for (let i = 3; i < n; i++) {
          const s = (x[i] + 3 * (c - b) + a) | 0;
          x[i] = s;
          a = b;
          b = c;
          c = s;
        }
        break;
      }
      case 4: {
        let a = x[0];
        let b = x[1];
        let c = x[2];
        let d = x[3];
        for (let i = 4; i < n; i++) {
          const s = (x[i] + 4 * (d + b) - 6 * c - a) | 0;
          x[i] = s;
          a = b;
          b = c;
          c = d;
          d = s;
        }
        break;
      }
    }
    return FRAME_OK;
  }

  private lpc(x: Int32Array, n: number, bits: number, order: number): FrameResult {
    if (order > n) return this.bad('predictor order over block size');
    for (let i = 0; i < order; i++) x[i] = this.readSigned(bits);
    const precision = this.readBits(4) + 1;
    if (precision === 16) return this.bad('coefficient precision code 15');
    const shift = this.readSigned(5);
    if (shift < 0) return this.bad('negative predictor shift');
    const coefs = this.coefs;
    let sumAbs = 0;
    for (let j = 0; j < order; j++) {
      const c = this.readSigned(precision);
      coefs[j] = c;
      sumAbs += Math.abs(c);
    }
    const r = this.residual(x, n, order);
    if (r !== FRAME_OK) return r;
    // |sum| <= sumAbs * 2^(bits-1) when every earlier sample fits `bits` (a valid stream): under
    // 2^31 the 32-bit sum is exact. Otherwise the sum in float64: |coef| <= 2^14 (15 bits),
    // |sample| <= 2^31, 32 terms: |sum| <= 2^(14+31+5) = 2^50 < 2^53, every partial sum exact.
    const { loop, taps } = lpcLoop(order, sumAbs * 2 ** (bits - 1) < 2 ** 31);
    coefs.fill(0, order, taps);
    loop(x, n, coefs, order, shift);
    return FRAME_OK;
  }

  /** Rice-coded residuals into x[order, n) (RFC 9639 section 9.2.7). */
  private residual(x: Int32Array, n: number, order: number): FrameResult {
    const method = this.readBits(2);
    if (method > 1) return this.bad('reserved residual coding method');
    const paramBits = method === 0 ? 4 : 5;
    const escapeCode = method === 0 ? 15 : 31;
    const partitionOrder = this.readBits(4);
    const partitions = 1 << partitionOrder;
    const per = n >> partitionOrder;
    if (per << partitionOrder !== n || per < order) return this.bad('residual partitions do not fit the block');
    let i = order;
    for (let part = 0; part < partitions; part++) {
      const to = (part + 1) * per;
      const k = this.readBits(paramBits);
      if (k === escapeCode) {
        const width = this.readBits(5);
        if (width === 0) x.fill(0, i, to);
        else for (; i < to; i++) x[i] = this.readSigned(width);
      } else if (k === 0) {
        for (; i < to; i++) {
          const u = this.readUnary(0xffffffff);
          x[i] = u % 2 ? -(u + 1) / 2 : u / 2;
        }
      } else if (k <= 24) this.pos = riceFast(this.view, this.pos, x, i, to, k, this);
      else {
        for (; i < to; i++) {
          const u = this.readUnary(0xffffffff >>> k) * 2 ** k + this.readBits(k);
          x[i] = u % 2 ? -(u + 1) / 2 : u / 2;
        }
      }
      i = to;
      if (this.pos > this.endBits) return FRAME_INCOMPLETE;
    }
    return FRAME_OK;
  }

  pastEnd(): boolean {
    return this.pos > this.endBits;
  }

  getPos(): number {
    return this.pos;
  }

  setPos(bitPosition: number): void {
    this.pos = bitPosition;
  }

  /** n <= 32 bits, unsigned. */
  readBits(n: number): number {
    if (n === 0) return 0;
    if (n > 24) {
      const hi = this.readBits(n - 16);
      return hi * 65536 + this.readBits(16);
    }
    const p = this.pos;
    const b = this.buf;
    const i = p >>> 3;
    this.pos = p + n;
    return (((b[i] << 24) | (b[i + 1] << 16) | (b[i + 2] << 8) | b[i + 3]) << (p & 7)) >>> (32 - n);
  }

  /** n <= 32 bits, two's complement. */
  readSigned(n: number): number {
    if (n === 0) return 0;
    const u = this.readBits(n);
    return u >= 2 ** (n - 1) ? u - 2 ** n : u;
  }

  /** Zero bits before the next one bit (which is consumed); stops counting past `limit` or the end. */
  readUnary(limit: number): number {
    const b = this.buf;
    let p = this.pos;
    let q = 0;
    for (;;) {
      const i = p >>> 3;
      const w = (((b[i] << 24) | (b[i + 1] << 16) | (b[i + 2] << 8) | b[i + 3]) << (p & 7)) | 0;
      const z = Math.clz32(w);
      const valid = 32 - (p & 7);
      if (z < valid) {
        this.pos = p + z + 1;
        return q + z;
      }
      q += valid;
      p += valid;
      if (q > limit || p > this.endBits) {
        this.pos = Math.max(p, this.endBits + 8);
        return q;
      }
    }
  }
}

/**
 * Rice parameter 1..24 for x[i, to): one 32-bit load serves the unary part and, most of the time,
 * the low bits. Returns the new bit position. A unary run that overflows the loaded word (a
 * residual of 2^24 or more: rare) takes the reader's general path.
 */
function riceFast(
  v: DataView,
  pos: number,
  x: Int32Array,
  i: number,
  to: number,
  k: number,
  r: FlacFrameDecoder,
): number {
  let p = pos;
  const kShift = 32 - k;
  for (; i < to; i++) {
    const w = v.getInt32(p >>> 3) << (p & 7);
    let q = Math.clz32(w);
    let low: number;
    // The word holds 32 - (p & 7) >= 25 valid bits.
    if (q + 1 + k <= 32 - (p & 7)) {
      low = (w << (q + 1)) >>> kShift;
      p += q + 1 + k;
    } else if (q < 25) {
      p += q + 1;
      low = (v.getInt32(p >>> 3) << (p & 7)) >>> kShift;
      p += k;
    } else {
      r.setPos(p);
      q = r.readUnary(0xffffffff >>> k);
      const u = q * 2 ** k + r.readBits(k);
      x[i] = u % 2 ? -(u + 1) / 2 : u / 2;
      p = r.getPos();
      // Past the valid bytes (zero runs of stale slack take this path): stop within the slack.
      if (r.pastEnd()) return p;
      continue;
    }
    const u = (q << k) | low;
    x[i] = (u >>> 1) ^ -(u & 1);
  }
  return p;
}
