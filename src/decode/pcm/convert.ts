// Integer and float sample formats to planar Float32: the one hot loop every PCM container
// (RIFF family, AIFF) runs through.
import { convertS24Stereo } from '../kernels/s24-stereo.ts';

/** How one stored sample looks: integer (signed unless uint8), or IEEE float. */
export interface SampleLayout {
  kind: 'int' | 'uint8' | 'float';
  bytesPerSample: 1 | 2 | 3 | 4 | 8;
  bigEndian: boolean;
}

const hostLittleEndian = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
let alignedScratch = new ArrayBuffer(0);

/** Little-endian, 8-byte aligned view of `byteLength` bytes: `bytes` itself when possible, else a scratch copy. */
function littleEndianAligned(
  bytes: Uint8Array,
  byteLength: number,
  sampleBytes: number,
  bigEndian: boolean,
): Uint8Array {
  const swap = bigEndian === hostLittleEndian;
  if (!swap && bytes.byteOffset % 8 === 0) return bytes;
  if (alignedScratch.byteLength < byteLength) alignedScratch = new ArrayBuffer(byteLength);
  const dst = new Uint8Array(alignedScratch, 0, byteLength);
  if (!swap) dst.set(bytes.subarray(0, byteLength));
  else
    for (let i = 0; i < byteLength; i += sampleBytes)
      for (let k = 0; k < sampleBytes; k++) dst[i + k] = bytes[i + sampleBytes - 1 - k];
  return dst;
}

// One small function per view type keeps each loop monomorphic for the JIT.
function fromI16(src: Int16Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  const k = 1 / 32768;
  if (ch === 2) {
    const l = out[0],
      r = out[1];
    for (let f = 0, i = 0; f < frames; f++, i += 2) {
      l[o0 + f] = src[i] * k;
      r[o0 + f] = src[i + 1] * k;
    }
    return;
  }
  for (let c = 0; c < ch; c++) {
    const d = out[c];
    for (let f = 0, i = c; f < frames; f++, i += ch) d[o0 + f] = src[i] * k;
  }
}

function fromI32(src: Int32Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  const k = 1 / 2147483648;
  for (let c = 0; c < ch; c++) {
    const d = out[c];
    for (let f = 0, i = c; f < frames; f++, i += ch) d[o0 + f] = src[i] * k;
  }
}

function fromF32(src: Float32Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  if (ch === 1) {
    out[0].set(src.subarray(0, frames), o0);
    return;
  }
  for (let c = 0; c < ch; c++) {
    const d = out[c];
    for (let f = 0, i = c; f < frames; f++, i += ch) d[o0 + f] = src[i];
  }
}

function fromF64(src: Float64Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  for (let c = 0; c < ch; c++) {
    const d = out[c];
    for (let f = 0, i = c; f < frames; f++, i += ch) d[o0 + f] = src[i];
  }
}

/** Little-endian 24-bit from 32-bit words: 4 samples per 3 words, far fewer loads than byte access. */
function fromS24(b: Uint8Array, ch: number, frames: number, out: readonly Float32Array[], o0: number): void {
  const k = 1 / 8388608;
  const samples = frames * ch;
  const groups = samples >> 2;
  const w = new Int32Array(b.buffer, b.byteOffset, groups * 3);
  if (ch === 2) {
    // Whole groups of four frames by the SIMD kernel; the rest (at most three frames) below.
    const l = out[0],
      r = out[1];
    const converted = convertS24Stereo(b, frames, l, r, o0);
    for (let g = converted / 2, f = o0 + converted, j = 3 * g; g < groups; g++, f += 2, j += 3) {
      const w0 = w[j],
        w1 = w[j + 1],
        w2 = w[j + 2];
      l[f] = ((w0 << 8) >> 8) * k;
      r[f] = ((((w0 >>> 24) | (w1 << 8)) << 8) >> 8) * k;
      l[f + 1] = ((((w1 >>> 16) | (w2 << 16)) << 8) >> 8) * k;
      r[f + 1] = (w2 >> 8) * k;
    }
  } else {
    let c = 0,
      f = o0;
    const put = (v: number): void => {
      out[c][f] = v * k;
      if (++c === ch) {
        c = 0;
        f++;
      }
    };
    for (let g = 0, j = 0; g < groups; g++, j += 3) {
      const w0 = w[j],
        w1 = w[j + 1],
        w2 = w[j + 2];
      put((w0 << 8) >> 8);
      put((((w0 >>> 24) | (w1 << 8)) << 8) >> 8);
      put((((w1 >>> 16) | (w2 << 16)) << 8) >> 8);
      put(w2 >> 8);
    }
  }
  for (let s = groups * 4; s < samples; s++) {
    // up to 3 leftover samples
    const i = s * 3;
    out[s % ch][o0 + Math.floor(s / ch)] = (((b[i + 2] << 24) | (b[i + 1] << 16) | (b[i] << 8)) >> 8) * k;
  }
}

/**
 * Deinterleaves `frames` frames from `bytes` into `out[c][outOffset...]` as float.
 * Integer scales are powers of two, so 8-24 bit results are exact.
 */
export function convertInterleaved(
  bytes: Uint8Array,
  frames: number,
  channels: number,
  layout: SampleLayout,
  out: readonly Float32Array[],
  outOffset: number,
): void {
  const bps = layout.bytesPerSample;
  if (bps === 1) {
    const k = 0.0078125; // 1/128
    for (let c = 0; c < channels; c++) {
      const d = out[c];
      if (layout.kind === 'uint8')
        for (let f = 0, i = c; f < frames; f++, i += channels) d[outOffset + f] = (bytes[i] - 128) * k;
      else for (let f = 0, i = c; f < frames; f++, i += channels) d[outOffset + f] = ((bytes[i] << 24) >> 24) * k;
    }
    return;
  }
  const byteLength = frames * channels * bps;
  const le = littleEndianAligned(bytes, byteLength, bps, layout.bigEndian);
  const count = frames * channels;
  if (bps === 3) return fromS24(le, channels, frames, out, outOffset);
  if (layout.kind === 'float') {
    if (bps === 4) return fromF32(new Float32Array(le.buffer, le.byteOffset, count), channels, frames, out, outOffset);
    return fromF64(new Float64Array(le.buffer, le.byteOffset, count), channels, frames, out, outOffset);
  }
  if (bps === 2) return fromI16(new Int16Array(le.buffer, le.byteOffset, count), channels, frames, out, outOffset);
  return fromI32(new Int32Array(le.buffer, le.byteOffset, count), channels, frames, out, outOffset);
}
