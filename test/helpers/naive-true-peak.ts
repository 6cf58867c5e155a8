// Straightforward reference for the optimised true-peak meter: all four phases of the
// BS.1770-5 Annex 2 filter evaluated directly at every sample, no pruning, no symmetry tricks.
// The table is the standard's, written out in reference-meters/peak-reference.ts.
import { ANNEX2_PHASES as PHASES } from './reference-meters/peak-reference.ts';

/** Returns the linear peak over all interpolated values and samples, and every interpolated value per input index. */
export function naiveTruePeak(samples: Float32Array): { peak: number; perSample: Float64Array } {
  const perSample = new Float64Array(samples.length);
  let peak = 0;
  for (let n = 0; n < samples.length; n++) {
    let best = Math.abs(samples[n]);
    for (const h of PHASES) {
      let y = 0;
      for (let k = 0; k < 12; k++) y += h[k] * (n - k >= 0 ? samples[n - k] : 0);
      best = Math.max(best, Math.abs(y));
    }
    perSample[n] = best;
    peak = Math.max(peak, best);
  }
  return { peak, perSample };
}
