// The speech detector's input: the speech channel at 16 kHz. A tone keeps its frequency and
// level, the output length follows the feed's rule, blocks of any size give the one-shot output
// sample for sample, tones above the output's Nyquist are held back, and the channel choice.

import { describe, expect, it } from 'vitest';
import type { ChannelLabel } from '../../src/analysis/audio.ts';
import { SPEECH_RATE_HZ, SpeechFeed, speechChannels } from '../../src/analysis/speech/feed.ts';

function sine(rate: number, hz: number, seconds: number, amplitude: number): Float32Array {
  const out = new Float32Array(Math.round(rate * seconds));
  for (let i = 0; i < out.length; i++) out[i] = amplitude * Math.sin((2 * Math.PI * hz * i) / rate);
  return out;
}

/** The feed's whole output for planar channels pushed in blocks of the given sizes (cycled). */
function resample(rate: number, channels: Float32Array[], picked: number[], sizes: number[]): Float32Array {
  const feed = new SpeechFeed(rate, picked);
  const parts: Float32Array[] = [];
  const total = channels[0].length;
  for (let start = 0, k = 0; start < total; k++) {
    const end = Math.min(total, start + sizes[k % sizes.length]);
    // The emitted view is reused by the next push: copy it.
    feed.push(
      channels.map((x) => x.subarray(start, end)),
      end - start,
      (samples) => parts.push(samples.slice()),
    );
    start = end;
  }
  const out = new Float32Array(parts.reduce((n, p) => n + p.length, 0));
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

/**
 * Least-squares fit of a sine of `hz` to y[from..]: its amplitude, and the RMS of what is left.
 * A wrong output frequency (or rate) drifts out of phase with the fitted one and leaves the
 * tone in the residual; so does any other component.
 */
function fitSine(y: Float32Array, hz: number, from: number): { amplitude: number; residualRms: number } {
  let ss = 0,
    cc = 0,
    sc = 0,
    ys = 0,
    yc = 0;
  const w = (2 * Math.PI * hz) / SPEECH_RATE_HZ;
  for (let n = from; n < y.length; n++) {
    const s = Math.sin(w * n);
    const c = Math.cos(w * n);
    ss += s * s;
    cc += c * c;
    sc += s * c;
    ys += y[n] * s;
    yc += y[n] * c;
  }
  const det = ss * cc - sc * sc;
  const a = (ys * cc - yc * sc) / det;
  const b = (yc * ss - ys * sc) / det;
  let residual = 0;
  for (let n = from; n < y.length; n++) residual += (y[n] - a * Math.sin(w * n) - b * Math.cos(w * n)) ** 2;
  return { amplitude: Math.hypot(a, b), residualRms: Math.sqrt(residual / (y.length - from)) };
}

/** Output samples after N input samples: output n sits at input index n * fs / 16000 and is
 * made once the sample after it has arrived (feed.ts), i.e. n * fs < (N - 1) * 16000, in integers. */
const expectedLength = (frames: number, rate: number) =>
  frames < 2 ? 0 : Math.floor(((frames - 1) * SPEECH_RATE_HZ - 1) / rate) + 1;

// Skip the low-pass filters' start (0.1 s at 16 kHz, far longer than their decay).
const SETTLED = 1600;
const AMPLITUDE = 0.5;

describe('SpeechFeed resampling to 16 kHz', () => {
  // Two 2nd-order Butterworth low-passes at 7 kHz, each |H| = 1 / sqrt(1 + r^4) with
  // r = tan(pi f / fs) / tan(pi 7000 / fs) (RBJ Audio EQ Cookbook low-pass, Q 1/sqrt(2): the
  // bilinear transform warped at the corner): at 1 kHz both together pass 0.9997. Linear
  // interpolation between 44.1 kHz samples loses at most (2 pi 1000 / 44100)^2 / 8 = 0.25 % of a
  // 1 kHz sine's amplitude (interpolation error bound, common practice). Hence 0.5 % on the level, and a residual under 0.1 % of the amplitude.
  for (const rate of [48000, 44100, 96000]) {
    it(`keeps a 1 kHz sine's frequency and level from ${rate} Hz`, () => {
      const x = sine(rate, 1000, 1, AMPLITUDE);
      const y = resample(rate, [x], [0], [x.length]);
      expect(y.length).toBe(expectedLength(x.length, rate));
      // One second in, 16000 out (less none: n * fs < (fs - 1) * 16000 holds for n = 15999).
      expect(y.length).toBe(16000);
      const { amplitude, residualRms } = fitSine(y, 1000, SETTLED);
      expect(Math.abs(amplitude / AMPLITUDE - 1)).toBeLessThan(0.005);
      expect(residualRms / AMPLITUDE).toBeLessThan(1e-3);
    });
  }

  it('keeps a 1 kHz sine from 8 kHz (upsampling by 2, no filter)', () => {
    const x = sine(8000, 1000, 1, AMPLITUDE);
    const y = resample(8000, [x], [0], [x.length]);
    // 7999 input intervals, two outputs each: 15998.
    expect(y.length).toBe(15998);
    expect(y.length).toBe(expectedLength(x.length, 8000));
    // Linear interpolation by 2 is the kernel [0.5, 1, 0.5] on the zero-stuffed signal, whose
    // 1 kHz component has half the amplitude: the tone's gain is (1 + cos(2 pi 1/16)) / 2 = 0.9619,
    // and its image at 7 kHz keeps (1 - cos(2 pi 1/16)) / 2 = 0.038 (FIR response, closed form).
    const { amplitude, residualRms } = fitSine(y, 1000, 0);
    expect(amplitude / AMPLITUDE).toBeCloseTo((1 + Math.cos(Math.PI / 8)) / 2, 4);
    const image = fitSine(y, 7000, 0);
    expect(image.amplitude / AMPLITUDE).toBeCloseTo((1 - Math.cos(Math.PI / 8)) / 2, 4);
    // The input samples themselves come through unchanged at every other output sample.
    for (let n = 0; n < y.length; n += 2) expect(y[n]).toBe(x[n / 2]);
    expect(residualRms / AMPLITUDE).toBeLessThan(0.03);
  });

  it('passes 7 kHz at -6.02 dB: two low-passes of Q 1/sqrt(2), each of gain Q at its corner', () => {
    // RBJ Audio EQ Cookbook low-pass: |H| at the corner frequency is Q (the bilinear transform
    // there is exact); two in a row, 0.5. At 48 kHz the output keeps every third sample: no
    // interpolation in between.
    const y = resample(48000, [sine(48000, 7000, 1, AMPLITUDE)], [0], [48000]);
    expect(fitSine(y, 7000, SETTLED).amplitude / AMPLITUDE).toBeCloseTo(0.5, 4);
  });

  // A tone above 8 kHz folds into the speech band at 16 kHz (12 kHz -> 4 kHz, 20 kHz -> 4 kHz).
  // The two sections at 48 kHz pass 1 / (1 + (tan(pi 12/48) / tan(pi 7/48))^4) = 0.056, -25 dB,
  // at 12 kHz (closed form, as above); one section alone would leave -12.5 dB, none 0 dB. So the
  // alias must be under -20 dB.
  for (const [rate, hz] of [
    [48000, 12000],
    [44100, 12000],
    [96000, 20000],
  ]) {
    it(`holds back a ${hz} Hz tone at ${rate} Hz (aliasing protection)`, () => {
      const y = resample(rate, [sine(rate, hz, 1, AMPLITUDE)], [0], [rate]);
      const alias = fitSine(y, Math.abs(hz - SPEECH_RATE_HZ), SETTLED).amplitude / AMPLITUDE;
      expect(20 * Math.log10(alias)).toBeLessThan(-20);
      // Nothing else comes through either: the whole output is as quiet.
      const rms = Math.sqrt(y.subarray(SETTLED).reduce((s, v) => s + v * v, 0) / (y.length - SETTLED));
      expect(20 * Math.log10((rms * Math.SQRT2) / AMPLITUDE)).toBeLessThan(-20);
    });
  }

  it('counts output samples by its rule for every input length, block by block', () => {
    for (const rate of [48000, 44100, 96000, 8000, 22050]) {
      const feed = new SpeechFeed(rate, [0]);
      const one = new Float32Array(1);
      let made = 0;
      const wrong: { frames: number; made: number }[] = [];
      for (let frames = 1; frames <= rate / 5; frames++) {
        feed.push([one], 1, (samples) => {
          made += samples.length;
        });
        if (made !== expectedLength(frames, rate)) wrong.push({ frames, made });
      }
      expect(wrong).toEqual([]);
      // 0.2 s in: 3200 out; from 8 kHz 3198 (1599 input intervals, two outputs each).
      expect(made).toBe(rate === 8000 ? 3198 : 3200);
    }
  });

  it('gives the one-shot output sample for sample whatever the block sizes', () => {
    for (const rate of [48000, 44100, 96000, 8000]) {
      // A tone plus a seeded noise, so every sample differs.
      let seed = 12345;
      const x = sine(rate, 1000, 0.6, 0.3).map((v) => {
        seed = (seed * 1103515245 + 12345) % 2 ** 31;
        return v + 0.2 * (seed / 2 ** 31 - 0.5);
      });
      const whole = resample(rate, [x], [0], [x.length]);
      expect(whole.length).toBe(expectedLength(x.length, rate));
      for (const sizes of [[1], [7], [4096], [1, 7, 4096, 3, 2], [4097, 1, 7, 19999]]) {
        expect(resample(rate, [x], [0], sizes)).toEqual(whole);
      }
    }
  });

  it('emits nothing for an empty block and keeps its place', () => {
    const x = sine(44100, 1000, 0.2, 0.5);
    const feed = new SpeechFeed(44100, [0]);
    let calls = 0;
    feed.push([new Float32Array(0)], 0, () => calls++);
    expect(calls).toBe(0);
    const parts: number[] = [];
    feed.push([x.subarray(0, 1000)], 1000, (s) => parts.push(...s));
    feed.push([x.subarray(1000, 1000)], 0, (s) => parts.push(...s));
    feed.push([x.subarray(1000)], x.length - 1000, (s) => parts.push(...s));
    expect(Float32Array.from(parts)).toEqual(resample(44100, [x], [0], [x.length]));
  });
});

describe('speechChannels and the mix', () => {
  const labels51: ChannelLabel[] = ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'];

  it('picks C alone when the layout has it beside other channels', () => {
    expect(speechChannels(labels51, 6)).toEqual([2]);
    expect(speechChannels(['L', 'R', 'C'], 3)).toEqual([2]);
  });

  it('takes every channel but the LFEs otherwise', () => {
    expect(speechChannels(['L', 'R'], 2)).toEqual([0, 1]);
    expect(speechChannels(['M'], 1)).toEqual([0]);
    expect(speechChannels(['L', 'R', 'LFE'], 3)).toEqual([0, 1]);
    expect(speechChannels(['L', 'R', 'LFE', 'Ls', 'Rs'], 5)).toEqual([0, 1, 3, 4]);
    expect(speechChannels(['L', 'LFE2', 'R', 'LFE'], 4)).toEqual([0, 2]);
    // A mono file labelled C is that channel; a lone LFE is still all there is.
    expect(speechChannels(['C'], 1)).toEqual([0]);
    expect(speechChannels(['LFE'], 1)).toEqual([0]);
  });

  it('feeds the mean of L and R for stereo', () => {
    const left = sine(48000, 1000, 0.5, 0.6);
    const right = sine(48000, 1000, 0.5, 0.2);
    const y = resample(48000, [left, right], speechChannels(['L', 'R'], 2), [4096]);
    // Mean of 0.6 and 0.2 in phase: 0.4, through the 0.9997 of the filters at 1 kHz.
    expect(fitSine(y, 1000, SETTLED).amplitude).toBeCloseTo(0.4, 3);
    // Opposite phases cancel.
    const cancelled = resample(48000, [left, left.map((v) => -v)], [0, 1], [4096]);
    expect(Math.max(...cancelled.map(Math.abs))).toBe(0);
  });

  it('feeds C alone for 5.1: loud L, R, LFE and surrounds do not reach the detector', () => {
    const centre = sine(48000, 1000, 0.5, 0.3);
    const loud = sine(48000, 300, 0.5, 0.9);
    const channels = labels51.map((label) => (label === 'C' ? centre : loud));
    const y = resample(48000, channels, speechChannels(labels51, 6), [4096]);
    expect(y).toEqual(resample(48000, [centre], [0], [4096]));
  });
});
