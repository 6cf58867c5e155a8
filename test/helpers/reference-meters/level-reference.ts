// Sample levels by definition (peak, RMS, DC, crest factor) and the time-weighted levels as the
// per-sample recurrences documented in src/analysis/ballistics.ts: one-pole Fast (125 ms) and Slow
// (1 s) on x^2 (IEC 61672-1 time constants), and the VU reading, two equal one-poles on |x| with
// tau = 0.3 s / 6.638 (99 % of a step in 300 ms), scaled by pi / (2 sqrt 2) to sine RMS.

const db20 = (linear: number) => (linear > 0 ? 20 * Math.log10(linear) : null);
const db10 = (power: number) => (power > 0 ? 10 * Math.log10(power) : null);
/** AES17: RMS referenced to a full-scale sine, 10 log10(2) dB higher. */
const AES17_DB = 10 * Math.log10(2);

export interface ChannelLevels {
  samplePeakDbfs: number | null;
  meanSquare: number;
  rmsDbfs: number | null;
  rmsAes17Db: number | null;
  dcOffset: number;
  dcOffsetDbfs: number | null;
  crestFactorDb: number | null;
  samplePeak: number;
}

export function referenceLevels(x: Float32Array): ChannelLevels {
  let peak = 0,
    sum = 0,
    sumSquares = 0;
  for (const v of x) {
    peak = Math.max(peak, Math.abs(v));
    sum += v;
    sumSquares += v * v;
  }
  const meanSquare = x.length > 0 ? sumSquares / x.length : 0;
  const dcOffset = x.length > 0 ? sum / x.length : 0;
  const rmsDbfs = db10(meanSquare);
  return {
    samplePeak: peak,
    samplePeakDbfs: db20(peak),
    meanSquare,
    rmsDbfs,
    rmsAes17Db: rmsDbfs === null ? null : rmsDbfs + AES17_DB,
    dcOffset,
    dcOffsetDbfs: db20(Math.abs(dcOffset)),
    crestFactorDb: meanSquare > 0 ? 20 * Math.log10(peak / Math.sqrt(meanSquare)) : null,
  };
}

/** The programme's RMS: the power mean of the channels' mean squares. */
export function programmeRmsDbfs(levels: ChannelLevels[]): number | null {
  return db10(levels.reduce((s, l) => s + l.meanSquare, 0) / Math.max(1, levels.length));
}

export interface TimeWeightedMaxima {
  maxFastDbfs: number | null;
  maxSlowDbfs: number | null;
  maxVuDbfs: number | null;
}

/** t / tau where the critically damped step response 1 - (1 + t/tau) e^(-t/tau) reaches 99 %, by bisection. */
function ninetyNinePercentRatio(): number {
  let low = 1,
    high = 20;
  for (let i = 0; i < 200; i++) {
    const middle = (low + high) / 2;
    if (1 - (1 + middle) * Math.exp(-middle) < 0.99) low = middle;
    else high = middle;
  }
  return low;
}

export function referenceTimeWeighted(x: Float32Array, sampleRate: number): TimeWeightedMaxima {
  const gain = (tauSeconds: number) => 1 - Math.exp(-1 / (tauSeconds * sampleRate));
  const bf = gain(0.125),
    bs = gain(1),
    bv = gain(0.3 / ninetyNinePercentRatio());
  let fast = 0,
    slow = 0,
    vu1 = 0,
    vu2 = 0,
    maxFast = 0,
    maxSlow = 0,
    maxVu = 0;
  for (const v of x) {
    fast += bf * (v * v - fast);
    slow += bs * (v * v - slow);
    vu1 += bv * (Math.abs(v) - vu1);
    vu2 += bv * (vu1 - vu2);
    maxFast = Math.max(maxFast, fast);
    maxSlow = Math.max(maxSlow, slow);
    maxVu = Math.max(maxVu, vu2);
  }
  return {
    maxFastDbfs: db10(maxFast),
    maxSlowDbfs: db10(maxSlow),
    maxVuDbfs: db20(maxVu * (Math.PI / (2 * Math.SQRT2))),
  };
}
