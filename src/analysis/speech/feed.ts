// The detector's input: one speech channel at 16 kHz, made block by block. The speech channel is
// C when the layout has one beside others (film and TV mixes carry dialogue there), otherwise the
// mean of every channel but the LFE. Resampling: two low-pass biquads at 7 kHz (above the input's
// and below the output's Nyquist), then linear interpolation at the output times; speech
// detection needs the speech band, not a transparent resampler.

import type { ChannelLabel } from '../audio.ts';
import type { Biquad } from '../k-weighting.ts';

export const SPEECH_RATE_HZ = 16000;
const LOW_PASS_HZ = 7000;

/** RBJ cookbook low-pass or high-pass biquad, normalised (common practice). */
export function rbj(kind: 'low' | 'high', hz: number, rate: number, q = Math.SQRT1_2): Biquad {
  const w = (2 * Math.PI * hz) / rate;
  const alpha = Math.sin(w) / (2 * q);
  const cos = Math.cos(w);
  const a0 = 1 + alpha;
  const b1 = kind === 'low' ? 1 - cos : -(1 + cos);
  const b0 = kind === 'low' ? (1 - cos) / 2 : (1 + cos) / 2;
  return { b0: b0 / a0, b1: b1 / a0, b2: b0 / a0, a1: (-2 * cos) / a0, a2: (1 - alpha) / a0 };
}

/** The channels whose mean is the speech channel. */
export function speechChannels(labels: readonly ChannelLabel[], channels: number): number[] {
  const centre = labels.indexOf('C');
  if (centre >= 0 && channels > 1) return [centre];
  const all = Array.from({ length: channels }, (_, c) => c);
  const heard = all.filter((c) => labels[c] !== 'LFE' && labels[c] !== 'LFE2');
  return heard.length > 0 ? heard : all;
}

export class SpeechFeed {
  private readonly filter: Biquad | null;
  private z0 = 0;
  private z1 = 0;
  private z2 = 0;
  private z3 = 0;
  /** Input samples per output sample. */
  private readonly step: number;
  /** Output samples made so far: the next one sits at input index made * step. */
  private made = 0;
  /** Input samples consumed before the current block, and the last filtered sample before it. */
  private consumed = 0;
  private previous = 0;
  private mixed = new Float32Array(0);
  private out = new Float32Array(0);

  constructor(
    sampleRate: number,
    private readonly channels: readonly number[],
  ) {
    this.filter = sampleRate > SPEECH_RATE_HZ ? rbj('low', LOW_PASS_HZ, sampleRate) : null;
    this.step = sampleRate / SPEECH_RATE_HZ;
  }

  /** The block's 16 kHz samples, handed to `emit` (a view reused on the next call). */
  push(channelData: readonly Float32Array[], frames: number, emit: (samples: Float32Array) => void): void {
    if (frames === 0) return;
    if (this.mixed.length < frames) this.mixed = new Float32Array(frames);
    const x = this.mixed;
    // Channel by channel: a loop over channels inside the sample loop costs 5 times as much.
    const [first, ...others] = this.channels;
    x.set(channelData[first].subarray(0, frames));
    for (const c of others) {
      const ch = channelData[c];
      for (let i = 0; i < frames; i++) x[i] += ch[i];
    }
    if (others.length > 0) {
      const gain = 1 / this.channels.length;
      for (let i = 0; i < frames; i++) x[i] *= gain;
    }
    const f = this.filter;
    if (f) {
      const { b0, b1, b2, a1, a2 } = f;
      let { z0, z1, z2, z3 } = this;
      for (let i = 0; i < frames; i++) {
        const s = x[i];
        const y = b0 * s + z0;
        z0 = b1 * s - a1 * y + z1;
        z1 = b2 * s - a2 * y;
        const v = b0 * y + z2;
        z2 = b1 * y - a1 * v + z3;
        z3 = b2 * y - a2 * v;
        x[i] = v;
      }
      this.z0 = z0;
      this.z1 = z1;
      this.z2 = z2;
      this.z3 = z3;
    }
    // Output n sits at input index n * step, between samples floor(n * step) and the next: it is
    // made once that next sample has arrived (the one before the block is kept as `previous`).
    const end = this.consumed + frames;
    const room = Math.ceil(frames / this.step) + 2;
    if (this.out.length < room) this.out = new Float32Array(room);
    const out = this.out;
    const { step, consumed, previous } = this;
    let made = this.made;
    let n = 0;
    for (let at = made * step; at < end - 1; at = ++made * step) {
      const whole = Math.floor(at);
      const i = whole - consumed;
      const a = i < 0 ? previous : x[i];
      out[n++] = a + (x[i + 1] - a) * (at - whole);
    }
    this.made = made;
    this.previous = x[frames - 1];
    this.consumed = end;
    if (n > 0) emit(out.subarray(0, n));
  }
}
