// The FLAC LPC prediction as RFC 9639 section 9.2.6 defines it, in BigInt: the reference the
// unrolled loops of src/decode/flac/lpc.ts are checked against.

/** Residuals for `samples` under the predictor (the encoder's side): samples minus predictions. */
export function lpcResiduals(samples: readonly number[], coefs: readonly number[], shift: number): number[] {
  const order = coefs.length;
  return samples.map((s, i) => (i < order ? s : s - Number(prediction(samples, coefs, shift, i))));
}

/** The decoder's side: warm-up samples then residual plus prediction. */
export function lpcRestore(residuals: readonly number[], coefs: readonly number[], shift: number): number[] {
  const out: number[] = [];
  for (let i = 0; i < residuals.length; i++)
    out.push(i < coefs.length ? residuals[i] : residuals[i] + Number(prediction(out, coefs, shift, i)));
  return out;
}

function prediction(samples: readonly number[], coefs: readonly number[], shift: number, i: number): bigint {
  let sum = 0n;
  for (let j = 0; j < coefs.length; j++) sum += BigInt(coefs[j]) * BigInt(samples[i - 1 - j]);
  return sum >> BigInt(shift);
}
