// 24-bit stereo PCM to planar float by the WebAssembly kernel in s24-stereo.wat (four frames per
// step; the scalar conversion's exact values).
import { instantiateKernel } from '../../analysis/kernels/instantiate.ts';
import { WASM_BASE64 } from './s24-stereo.wasm.ts';

/** Frames per kernel call. */
export const S24_KERNEL_FRAMES = 16384;

let instance: { input: Uint8Array; left: Float32Array; right: Float32Array; convert: (frames: number) => void } | null =
  null;

/** One instance per thread: a conversion runs start to end in one synchronous call, so decodes that
 * interleave at their awaits never share it mid-call. */
function kernel(): NonNullable<typeof instance> {
  if (instance) return instance;
  const exports = instantiateKernel<{ convert: (frames: number) => void }>(WASM_BASE64);
  const buffer = exports.memory.buffer;
  instance = {
    input: new Uint8Array(buffer, 0, 6 * S24_KERNEL_FRAMES),
    left: new Float32Array(buffer, 131072, S24_KERNEL_FRAMES),
    right: new Float32Array(buffer, 196608, S24_KERNEL_FRAMES),
    convert: exports.convert,
  };
  return instance;
}

/**
 * Converts the whole multiples of four frames of `bytes` (interleaved little-endian 24-bit stereo)
 * into left[at...] and right[at...]; returns how many frames it converted.
 */
export function convertS24Stereo(
  bytes: Uint8Array,
  frames: number,
  left: Float32Array,
  right: Float32Array,
  at: number,
): number {
  const k = kernel();
  let done = 0;
  while (frames - done >= 4) {
    const n = Math.min(S24_KERNEL_FRAMES, (frames - done) & ~3);
    k.input.set(bytes.subarray(6 * done, 6 * (done + n)));
    k.convert(n);
    left.set(k.left.subarray(0, n), at + done);
    right.set(k.right.subarray(0, n), at + done);
    done += n;
  }
  return done;
}
