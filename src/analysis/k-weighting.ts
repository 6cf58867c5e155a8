// ITU-R BS.1770-5 Annex 1 K-weighting, derived for any sample rate.
// The standard publishes coefficients for 48 kHz only and asks other rates for "the same
// frequency response". We derive both biquads from analog prototypes (shelf and RLB high-pass)
// through the bilinear transform with frequency pre-warping; the prototype parameters below
// reproduce the published 48 kHz tables to about 1e-15.

import type { ChannelLabel } from './audio.ts';
import { loudnessWeight } from './layouts.ts';

export interface Biquad {
  b0: number;
  b1: number;
  b2: number;
  a1: number;
  a2: number;
}

const SHELF_F0_HZ = 1681.974450955533;
const SHELF_GAIN_DB = 3.999843853973347;
const SHELF_Q = 0.7071752369554196;
const SHELF_VB_EXPONENT = 0.4996667741545416;
const HIGHPASS_F0_HZ = 38.13547087602444;
const HIGHPASS_Q = 0.5003270373238773;

/** Stage 1: the high-frequency shelf modelling the acoustic effect of the head. */
export function shelfCoefficients(sampleRate: number): Biquad {
  const vh = Math.pow(10, SHELF_GAIN_DB / 20);
  const vb = Math.pow(vh, SHELF_VB_EXPONENT);
  const k = Math.tan((Math.PI * SHELF_F0_HZ) / sampleRate);
  const a0 = 1 + k / SHELF_Q + k * k;
  return {
    b0: (vh + (vb * k) / SHELF_Q + k * k) / a0,
    b1: (2 * (k * k - vh)) / a0,
    b2: (vh - (vb * k) / SHELF_Q + k * k) / a0,
    a1: (2 * (k * k - 1)) / a0,
    a2: (1 - k / SHELF_Q + k * k) / a0,
  };
}

/** Stage 2: the RLB high-pass. Its numerator stays [1, -2, 1] as in Table 2. */
export function highpassCoefficients(sampleRate: number): Biquad {
  const k = Math.tan((Math.PI * HIGHPASS_F0_HZ) / sampleRate);
  const a0 = 1 + k / HIGHPASS_Q + k * k;
  return {
    b0: 1,
    b1: -2,
    b2: 1,
    a1: (2 * (k * k - 1)) / a0,
    a2: (1 - k / HIGHPASS_Q + k * k) / a0,
  };
}

/** Magnitude response of a biquad at a frequency, linear. */
export function biquadGain(filter: Biquad, frequencyHz: number, sampleRate: number): number {
  const w = (2 * Math.PI * frequencyHz) / sampleRate;
  const re = (c0: number, c1: number, c2: number) => c0 + c1 * Math.cos(w) + c2 * Math.cos(2 * w);
  const im = (c1: number, c2: number) => -(c1 * Math.sin(w) + c2 * Math.sin(2 * w));
  const num = Math.hypot(re(filter.b0, filter.b1, filter.b2), im(filter.b1, filter.b2));
  const den = Math.hypot(re(1, filter.a1, filter.a2), im(filter.a1, filter.a2));
  return num / den;
}

/**
 * BS.1770-5 channel weight Gi of a speaker role, from its nominal position (Annex 3 Table 4;
 * layouts.ts): 1.41 at the sides, 1.0 elsewhere, LFE excluded (0).
 */
export function channelWeight(label: ChannelLabel): number {
  return loudnessWeight(label);
}
