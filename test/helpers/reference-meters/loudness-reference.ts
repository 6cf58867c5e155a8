// ITU-R BS.1770-5 loudness and EBU Tech 3342 loudness range by definition, for short test signals:
// K-weighting as two biquads per sample (Annex 1), loudness per eq. (2), 400 ms gating blocks with
// 75 % overlap (eq. (3)), the absolute and relative gates (eqs. (4)-(7)), and a plain search over
// every 400 ms and 3 s window for the maxima (EBU Tech 3341 2.2: sliding rectangular windows).

export interface Biquad {
  b0: number;
  b1: number;
  b2: number;
  a1: number;
  a2: number;
}

/** ITU-R BS.1770-5 Annex 1, Table 1: the pre-filter (head shelf) at 48 kHz. */
export const TABLE1_48K: Biquad = {
  b0: 1.53512485958697,
  b1: -2.69169618940638,
  b2: 1.19839281085285,
  a1: -1.69065929318241,
  a2: 0.73248077421585,
};
/** ITU-R BS.1770-5 Annex 1, Table 2: the RLB high-pass at 48 kHz. */
export const TABLE2_48K: Biquad = { b0: 1, b1: -2, b2: 1, a1: -1.99004745483398, a2: 0.99007225036621 };

/**
 * Both stages for any rate. BS.1770-5 Annex 1 publishes 48 kHz only and asks other rates for the
 * same frequency response; as libebur128 (the open reference implementation, ebur128_init_filter)
 * does, other rates use the bilinear transform with pre-warping of an analog shelf and high-pass
 * whose parameters are fitted to Tables 1 and 2. At 48 kHz the derivation gives the tables back
 * (checked in test/analysis/reference-standards.test.ts).
 */
export function kWeightingStages(sampleRate: number): [Biquad, Biquad] {
  if (sampleRate === 48_000) return [TABLE1_48K, TABLE2_48K];
  return derivedStages(sampleRate);
}

export function derivedStages(sampleRate: number): [Biquad, Biquad] {
  const shelfHz = 1681.974450955533,
    gainDb = 3.999843853973347,
    shelfQ = 0.7071752369554196;
  const vh = 10 ** (gainDb / 20),
    vb = vh ** 0.4996667741545416;
  let k = Math.tan((Math.PI * shelfHz) / sampleRate);
  let a0 = 1 + k / shelfQ + k * k;
  const shelf = {
    b0: (vh + (vb * k) / shelfQ + k * k) / a0,
    b1: (2 * (k * k - vh)) / a0,
    b2: (vh - (vb * k) / shelfQ + k * k) / a0,
    a1: (2 * (k * k - 1)) / a0,
    a2: (1 - k / shelfQ + k * k) / a0,
  };
  const highpassHz = 38.13547087602444,
    highpassQ = 0.5003270373238773;
  k = Math.tan((Math.PI * highpassHz) / sampleRate);
  a0 = 1 + k / highpassQ + k * k;
  return [shelf, { b0: 1, b1: -2, b2: 1, a1: (2 * (k * k - 1)) / a0, a2: (1 - k / highpassQ + k * k) / a0 }];
}

/** BS.1770-5 Table 3 weights by speaker role (Annex 3: 1.41 at 60-120 deg azimuth): surrounds, sides and the 60 deg wides 1.41, LFE left out, the rest 1.0. */
export function channelWeight(label: string): number {
  if (label === 'LFE' || label === 'LFE2') return 0;
  return ['Ls', 'Rs', 'Lss', 'Rss', 'Lw', 'Rw'].includes(label) ? 1.41 : 1;
}

function filter(x: ArrayLike<number>, stage: Biquad): Float64Array {
  const y = new Float64Array(x.length);
  let x1 = 0,
    x2 = 0,
    y1 = 0,
    y2 = 0;
  for (let n = 0; n < x.length; n++) {
    const out = stage.b0 * x[n] + stage.b1 * x1 + stage.b2 * x2 - stage.a1 * y1 - stage.a2 * y2;
    x2 = x1;
    x1 = x[n];
    y2 = y1;
    y1 = out;
    y[n] = out;
  }
  return y;
}

const lufsOf = (meanPower: number) => -0.691 + 10 * Math.log10(meanPower);

export interface LoudnessLimits {
  momentaryLimitLufs?: number;
  shortTermLimitLufs?: number;
}

export interface LoudnessEvent {
  kind: 'loud_momentary' | 'loud_short_term';
  startFrame: number;
  endFrame: number;
  peakValue: number;
}

export interface ReferenceLoudness {
  integratedLufs: number | null;
  loudnessRangeLu: number | null;
  maxMomentaryLufs: number | null;
  maxShortTermLufs: number | null;
  /** Loudness of the window of `frames` ending at `endFrame` (to check where a maximum lies). */
  windowLufs(endFrame: number, frames: number): number;
  /** Every 100 ms from 0.1 s: the 400 ms / 3 s ending there, NaN before the window fills or at or below -70 LUFS. */
  momentary: number[];
  shortTerm: number[];
  events: LoudnessEvent[];
}

export function referenceLoudness(
  channels: Float32Array[],
  labels: readonly string[],
  sampleRate: number,
  limits: LoudnessLimits = {},
): ReferenceLoudness {
  const frames = channels[0]?.length ?? 0;
  const [shelf, highpass] = kWeightingStages(sampleRate);
  // The weighted K-filtered power of each frame over the channels (BS.1770-5 eq. (2)), then its
  // running sum: sum[n] covers frames [0, n).
  const power = new Float64Array(frames);
  channels.forEach((x, c) => {
    const weight = channelWeight(labels[c]);
    if (weight === 0) return;
    const z = filter(filter(x, shelf), highpass);
    for (let n = 0; n < frames; n++) power[n] += weight * z[n] * z[n];
  });
  const sum = new Float64Array(frames + 1);
  for (let n = 0; n < frames; n++) sum[n + 1] = sum[n] + power[n];
  const meanPower = (from: number, to: number) => (sum[to] - sum[from]) / (to - from);

  // 100 ms steps: a 400 ms block (75 % overlap) or 3 s window ends at each step boundary.
  const boundary = (k: number) => Math.round((k * sampleRate) / 10);
  const steps: number[] = [];
  for (let k = 1; boundary(k) <= frames; k++) steps.push(k);
  const windowPower = (k: number, span: number) =>
    k >= span ? meanPower(boundary(k - span), boundary(k)) : Number.NaN;
  const blocks = steps.filter((k) => k >= 4).map((k) => windowPower(k, 4));
  const shortTerms = steps.filter((k) => k >= 30).map((k) => windowPower(k, 30));
  const shown = (p: number) => (p > 0 && lufsOf(p) > -70 && p < Infinity ? lufsOf(p) : Number.NaN);

  return {
    integratedLufs: gated(blocks, -10),
    loudnessRangeLu: loudnessRange(shortTerms),
    maxMomentaryLufs: maxWindow(sum, Math.round(0.4 * sampleRate)),
    maxShortTermLufs: maxWindow(sum, Math.round(3 * sampleRate)),
    windowLufs: (endFrame, length) => lufsOf(meanPower(endFrame - length, endFrame)),
    momentary: steps.map((k) => shown(windowPower(k, 4))),
    shortTerm: steps.map((k) => shown(windowPower(k, 30))),
    events: [
      ...limitEvents(
        'loud_momentary',
        limits.momentaryLimitLufs,
        steps,
        (k) => windowPower(k, 4),
        (k) => boundary(k - 4),
        boundary,
      ),
      ...limitEvents(
        'loud_short_term',
        limits.shortTermLimitLufs,
        steps,
        (k) => windowPower(k, 30),
        (k) => boundary(k - 30),
        boundary,
      ),
    ],
  };
}

/** BS.1770-5 eqs. (4)-(7): blocks above -70 LKFS (eq. (6)), then above their loudness minus 10 LU. */
function gated(blockPowers: number[], relativeLu: number): number | null {
  const absolute = blockPowers.filter((p) => p > 0 && lufsOf(p) > -70);
  if (absolute.length === 0) return null;
  const relativeGate = lufsOf(mean(absolute)) + relativeLu;
  const kept = absolute.filter((p) => lufsOf(p) > relativeGate);
  return kept.length === 0 ? null : lufsOf(mean(kept));
}

/** EBU Tech 3342 s.5: short-term values above -70 LUFS and above their power mean minus 20 LU; P95 - P10. */
function loudnessRange(shortTermPowers: number[]): number | null {
  const absolute = shortTermPowers.filter((p) => p > 0 && lufsOf(p) > -70);
  if (absolute.length === 0) return null;
  const relativeGate = lufsOf(mean(absolute)) - 20;
  const kept = absolute
    .map(lufsOf)
    .filter((l) => l > relativeGate)
    .sort((a, b) => a - b);
  if (kept.length === 0) return null;
  // Tech 3342 s.5: value number round((n - 1) p / 100 + 1) of the ascending sort, counted from 1.
  const percentile = (p: number) => kept[Math.round(((kept.length - 1) * p) / 100 + 1) - 1];
  return percentile(95) - percentile(10);
}

/** The loudest window of `length` frames ending anywhere in the stream (every sample, not the 100 ms grid). */
function maxWindow(sum: Float64Array, length: number): number | null {
  let best = 0;
  for (let end = length; end < sum.length; end++) best = Math.max(best, sum[end] - sum[end - length]);
  return best > 0 ? lufsOf(best / length) : null;
}

/** Stretches of the 10 Hz series above a limit; each spans its windows, from the first one's start. */
function limitEvents(
  kind: LoudnessEvent['kind'],
  limitLufs: number | undefined,
  steps: number[],
  powerAt: (k: number) => number,
  windowStart: (k: number) => number,
  boundary: (k: number) => number,
): LoudnessEvent[] {
  if (limitLufs === undefined) return [];
  const events: LoudnessEvent[] = [];
  let open: LoudnessEvent | null = null;
  for (const k of steps) {
    const p = powerAt(k);
    if (p > 0 && lufsOf(p) > limitLufs) {
      if (open) {
        open.endFrame = boundary(k);
        open.peakValue = Math.max(open.peakValue, lufsOf(p));
      } else open = { kind, startFrame: Math.max(0, windowStart(k)), endFrame: boundary(k), peakValue: lufsOf(p) };
    } else if (open) {
      events.push(open);
      open = null;
    }
  }
  if (open) events.push(open);
  return events;
}

const mean = (values: number[]) => values.reduce((s, v) => s + v, 0) / values.length;
