// LPC prediction (RFC 9639 section 9.2.6), unrolled: orders up to 4, 8 and 12 as that many taps,
// the coefficients past the order zero. The history lives in locals (s0 the newest sample), so a
// sample costs its multiply-adds and the load of its residual. Orders over 12 take the plain
// loops at the end. test/decode/flac-lpc.test.ts checks every function at every order it serves
// against the plain definition.
//
// Two arithmetics. Int32: exact when the caller has proved |sum| < 2^31 (the sum of |coef| times
// the largest sample the subframe's bit depth allows). Float64: exact for any valid stream, each
// coefficient scaled by 2^-shift (exact, a power of two), so every product and partial sum is an
// integer below 2^50 (|coef| <= 2^14, |sample| <= 2^31, at most 32 terms) times 2^-shift, which a
// double holds exactly in any order of summation; Math.floor of it is the arithmetic shift.
// `c` holds zeros past `order` up to the taps.

export type LpcLoop = (x: Int32Array, n: number, c: Int32Array, order: number, shift: number) => void;

export function lpcInt32Taps4(x: Int32Array, n: number, c: Int32Array, order: number, shift: number): void {
  const c0 = c[0];
  const c1 = c[1];
  const c2 = c[2];
  const c3 = c[3];
  let s0 = order > 0 ? x[order - 1] : 0;
  let s1 = order > 1 ? x[order - 2] : 0;
  let s2 = order > 2 ? x[order - 3] : 0;
  let s3 = order > 3 ? x[order - 4] : 0;
  for (let i = order; i < n; i++) {
    const rest = (Math.imul(c1, s1) + Math.imul(c2, s2) + Math.imul(c3, s3)) | 0;
    const v = (x[i] + ((Math.imul(c0, s0) + rest) >> shift)) | 0;
    x[i] = v;
    s3 = s2;
    s2 = s1;
    s1 = s0;
    s0 = v;
  }
}

export function lpcFloat64Taps4(x: Int32Array, n: number, c: Int32Array, order: number, shift: number): void {
  const k = 2 ** -shift;
  const c0 = c[0] * k;
  const c1 = c[1] * k;
  const c2 = c[2] * k;
  const c3 = c[3] * k;
  let s0 = order > 0 ? x[order - 1] : 0;
  let s1 = order > 1 ? x[order - 2] : 0;
  let s2 = order > 2 ? x[order - 3] : 0;
  let s3 = order > 3 ? x[order - 4] : 0;
  for (let i = order; i < n; i++) {
    const rest = c1 * s1 + c2 * s2 + c3 * s3;
    const v = x[i] + Math.floor(c0 * s0 + rest);
    x[i] = v;
    s3 = s2;
    s2 = s1;
    s1 = s0;
    s0 = v;
  }
}

export function lpcInt32Taps8(x: Int32Array, n: number, c: Int32Array, order: number, shift: number): void {
  const c0 = c[0];
  const c1 = c[1];
  const c2 = c[2];
  const c3 = c[3];
  const c4 = c[4];
  const c5 = c[5];
  const c6 = c[6];
  const c7 = c[7];
  let s0 = order > 0 ? x[order - 1] : 0;
  let s1 = order > 1 ? x[order - 2] : 0;
  let s2 = order > 2 ? x[order - 3] : 0;
  let s3 = order > 3 ? x[order - 4] : 0;
  let s4 = order > 4 ? x[order - 5] : 0;
  let s5 = order > 5 ? x[order - 6] : 0;
  let s6 = order > 6 ? x[order - 7] : 0;
  let s7 = order > 7 ? x[order - 8] : 0;
  for (let i = order; i < n; i++) {
    const rest =
      (Math.imul(c1, s1) +
        Math.imul(c2, s2) +
        (Math.imul(c3, s3) + Math.imul(c4, s4)) +
        (Math.imul(c5, s5) + Math.imul(c6, s6) + Math.imul(c7, s7))) |
      0;
    const v = (x[i] + ((Math.imul(c0, s0) + rest) >> shift)) | 0;
    x[i] = v;
    s7 = s6;
    s6 = s5;
    s5 = s4;
    s4 = s3;
    s3 = s2;
    s2 = s1;
    s1 = s0;
    s0 = v;
  }
}

export function lpcFloat64Taps8(x: Int32Array, n: number, c: Int32Array, order: number, shift: number): void {
  const k = 2 ** -shift;
  const c0 = c[0] * k;
  const c1 = c[1] * k;
  const c2 = c[2] * k;
  const c3 = c[3] * k;
  const c4 = c[4] * k;
  const c5 = c[5] * k;
  const c6 = c[6] * k;
  const c7 = c[7] * k;
  let s0 = order > 0 ? x[order - 1] : 0;
  let s1 = order > 1 ? x[order - 2] : 0;
  let s2 = order > 2 ? x[order - 3] : 0;
  let s3 = order > 3 ? x[order - 4] : 0;
  let s4 = order > 4 ? x[order - 5] : 0;
  let s5 = order > 5 ? x[order - 6] : 0;
  let s6 = order > 6 ? x[order - 7] : 0;
  let s7 = order > 7 ? x[order - 8] : 0;
  for (let i = order; i < n; i++) {
    const rest = c1 * s1 + c2 * s2 + (c3 * s3 + c4 * s4) + (c5 * s5 + c6 * s6 + c7 * s7);
    const v = x[i] + Math.floor(c0 * s0 + rest);
    x[i] = v;
    s7 = s6;
    s6 = s5;
    s5 = s4;
    s4 = s3;
    s3 = s2;
    s2 = s1;
    s1 = s0;
    s0 = v;
  }
}

export function lpcInt32Taps12(x: Int32Array, n: number, c: Int32Array, order: number, shift: number): void {
  const c0 = c[0];
  const c1 = c[1];
  const c2 = c[2];
  const c3 = c[3];
  const c4 = c[4];
  const c5 = c[5];
  const c6 = c[6];
  const c7 = c[7];
  const c8 = c[8];
  const c9 = c[9];
  const c10 = c[10];
  const c11 = c[11];
  let s0 = order > 0 ? x[order - 1] : 0;
  let s1 = order > 1 ? x[order - 2] : 0;
  let s2 = order > 2 ? x[order - 3] : 0;
  let s3 = order > 3 ? x[order - 4] : 0;
  let s4 = order > 4 ? x[order - 5] : 0;
  let s5 = order > 5 ? x[order - 6] : 0;
  let s6 = order > 6 ? x[order - 7] : 0;
  let s7 = order > 7 ? x[order - 8] : 0;
  let s8 = order > 8 ? x[order - 9] : 0;
  let s9 = order > 9 ? x[order - 10] : 0;
  let s10 = order > 10 ? x[order - 11] : 0;
  let s11 = order > 11 ? x[order - 12] : 0;
  for (let i = order; i < n; i++) {
    const rest =
      (Math.imul(c1, s1) +
        Math.imul(c2, s2) +
        (Math.imul(c3, s3) + Math.imul(c4, s4)) +
        (Math.imul(c5, s5) + Math.imul(c6, s6) + (Math.imul(c7, s7) + Math.imul(c8, s8))) +
        (Math.imul(c9, s9) + Math.imul(c10, s10) + Math.imul(c11, s11))) |
      0;
    const v = (x[i] + ((Math.imul(c0, s0) + rest) >> shift)) | 0;
    x[i] = v;
    s11 = s10;
    s10 = s9;
    s9 = s8;
    s8 = s7;
    s7 = s6;
    s6 = s5;
    s5 = s4;
    s4 = s3;
    s3 = s2;
    s2 = s1;
    s1 = s0;
    s0 = v;
  }
}

export function lpcFloat64Taps12(x: Int32Array, n: number, c: Int32Array, order: number, shift: number): void {
  const k = 2 ** -shift;
  const c0 = c[0] * k;
  const c1 = c[1] * k;
  const c2 = c[2] * k;
  const c3 = c[3] * k;
  const c4 = c[4] * k;
  const c5 = c[5] * k;
  const c6 = c[6] * k;
  const c7 = c[7] * k;
  const c8 = c[8] * k;
  const c9 = c[9] * k;
  const c10 = c[10] * k;
  const c11 = c[11] * k;
  let s0 = order > 0 ? x[order - 1] : 0;
  let s1 = order > 1 ? x[order - 2] : 0;
  let s2 = order > 2 ? x[order - 3] : 0;
  let s3 = order > 3 ? x[order - 4] : 0;
  let s4 = order > 4 ? x[order - 5] : 0;
  let s5 = order > 5 ? x[order - 6] : 0;
  let s6 = order > 6 ? x[order - 7] : 0;
  let s7 = order > 7 ? x[order - 8] : 0;
  let s8 = order > 8 ? x[order - 9] : 0;
  let s9 = order > 9 ? x[order - 10] : 0;
  let s10 = order > 10 ? x[order - 11] : 0;
  let s11 = order > 11 ? x[order - 12] : 0;
  for (let i = order; i < n; i++) {
    const rest =
      c1 * s1 +
      c2 * s2 +
      (c3 * s3 + c4 * s4) +
      (c5 * s5 + c6 * s6 + (c7 * s7 + c8 * s8)) +
      (c9 * s9 + c10 * s10 + c11 * s11);
    const v = x[i] + Math.floor(c0 * s0 + rest);
    x[i] = v;
    s11 = s10;
    s10 = s9;
    s9 = s8;
    s8 = s7;
    s7 = s6;
    s6 = s5;
    s5 = s4;
    s4 = s3;
    s3 = s2;
    s2 = s1;
    s1 = s0;
    s0 = v;
  }
}

export function lpcInt32(x: Int32Array, n: number, c: Int32Array, order: number, shift: number): void {
  for (let i = order; i < n; i++) {
    let sum = 0;
    for (let j = 0; j < order; j++) sum = (sum + Math.imul(c[j], x[i - 1 - j])) | 0;
    x[i] = (x[i] + (sum >> shift)) | 0;
  }
}

export function lpcFloat64(x: Int32Array, n: number, c: Int32Array, order: number, shift: number): void {
  const k = 2 ** -shift;
  for (let i = order; i < n; i++) {
    let sum = 0;
    for (let j = 0; j < order; j++) sum += c[j] * k * x[i - 1 - j];
    x[i] = x[i] + Math.floor(sum);
  }
}

/** The loop for an order (1 to 32) and arithmetic, and the taps it needs zeroed in `c`. */
export function lpcLoop(order: number, int32: boolean): { loop: LpcLoop; taps: number } {
  if (order <= 4) return { loop: int32 ? lpcInt32Taps4 : lpcFloat64Taps4, taps: 4 };
  if (order <= 8) return { loop: int32 ? lpcInt32Taps8 : lpcFloat64Taps8, taps: 8 };
  if (order <= 12) return { loop: int32 ? lpcInt32Taps12 : lpcFloat64Taps12, taps: 12 };
  return { loop: int32 ? lpcInt32 : lpcFloat64, taps: order };
}
