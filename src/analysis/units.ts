// Level conversions every meter shares. A level of digital silence is null (JSON has no -Infinity).

/** Amplitude to dBFS; digital silence is null. */
export function amplitudeToDb(linear: number): number | null {
  return linear > 0 ? 20 * Math.log10(linear) : null;
}

/** Mean square to dBFS (same reference as amplitudeToDb(rms)). */
export function powerToDb(meanSquare: number): number | null {
  return meanSquare > 0 ? 10 * Math.log10(meanSquare) : null;
}

/** dB (20 log10) to amplitude. */
export function dbToAmplitude(db: number): number {
  return 10 ** (db / 20);
}

/** dB (10 log10) to power (mean square). */
export function dbToPower(db: number): number {
  return 10 ** (db / 10);
}
