import { describe, expect, it } from 'vitest';
import { defaultChannelLabels, type StreamInfo } from '../../src/analysis/audio.ts';
import { TimeWeightedLevelMeter } from '../../src/analysis/ballistics.ts';

const fs = 48_000;
const mono: StreamInfo = { sampleRate: fs, channels: 1, channelLabels: defaultChannelLabels(1) };
const stereo: StreamInfo = { sampleRate: fs, channels: 2, channelLabels: defaultChannelLabels(2) };

function sine(frames: number, amplitude: number, hz = 1000): Float32Array {
  const x = new Float32Array(frames);
  for (let i = 0; i < frames; i++) x[i] = amplitude * Math.sin((2 * Math.PI * hz * i) / fs);
  return x;
}

function pushAll(meter: TimeWeightedLevelMeter, channels: Float32Array[], blockFrames = 65_536): void {
  const total = channels[0].length;
  for (let s = 0; s < total; s += blockFrames) {
    const e = Math.min(total, s + blockFrames);
    meter.push({ channelData: channels.map((c) => c.subarray(s, e)), frames: e - s });
  }
}

const DB_PER_TAU = 10 * Math.log10(Math.E); // 4.3429 dB: power decays by e per time constant (handbook)

describe('TimeWeightedLevelMeter', () => {
  it('Fast and Slow on a steady full-scale sine converge to its RMS, -3.01 dBFS (IEC 61672-1:2013 5.7 exponential time weighting; RMS = A/sqrt2, handbook)', () => {
    const meter = new TimeWeightedLevelMeter(mono);
    pushAll(meter, [sine(fs * 10, 1)]);
    const now = meter.current(0);
    expect(now.fastDbfs).toBeCloseTo(-3.0103, 2);
    expect(now.slowDbfs).toBeCloseTo(-3.0103, 2);
    const r = meter.result().channels[0];
    // Ripple at 2 kHz rides on the mean: maxima sit a hair above the RMS.
    expect(r.maxFastDbfs).toBeGreaterThan(-3.0103);
    expect(r.maxFastDbfs).toBeLessThan(-3.0);
    expect(r.maxSlowDbfs).toBeCloseTo(-3.0103, 2);
  });

  it('Fast decays 4.34 dB per 0.125 s and Slow 4.34 dB per 1 s after a tone burst (IEC 61672-1:2013 time constants F 0.125 s, S 1 s)', () => {
    const meter = new TimeWeightedLevelMeter(mono);
    pushAll(meter, [sine(fs * 5, 0.5)]);
    const before = meter.current(0);
    pushAll(meter, [new Float32Array(fs / 8)]);
    const afterTau = meter.current(0);
    expect((before.fastDbfs ?? 0) - (afterTau.fastDbfs ?? 0)).toBeCloseTo(DB_PER_TAU, 6);
    pushAll(meter, [new Float32Array(fs / 8)]);
    expect((before.fastDbfs ?? 0) - (meter.current(0).fastDbfs ?? 0)).toBeCloseTo(2 * DB_PER_TAU, 6);
    pushAll(meter, [new Float32Array(fs * 0.75)]);
    expect((before.slowDbfs ?? 0) - (meter.current(0).slowDbfs ?? 0)).toBeCloseTo(DB_PER_TAU, 6);
  });

  it('reads short tone bursts low by 10 log10(1 - e^(-T/tau)): 200 ms -1.0 dB, 2 ms -18.0 dB on Fast (IEC 61672-1:2013 Table 3 toneburst response, from memory)', () => {
    for (const [seconds, expectedDb] of [
      [0.2, -1.0],
      [0.002, -18.0],
    ] as const) {
      const meter = new TimeWeightedLevelMeter(mono);
      const burst = sine(Math.round(seconds * fs), 1, 4000);
      pushAll(
        meter,
        [burst].map((b) => {
          const x = new Float32Array(fs);
          x.set(b, 1000);
          return x;
        }),
      );
      const steadyDbfs = -3.0103;
      expect((meter.result().channels[0].maxFastDbfs ?? 0) - steadyDbfs).toBeCloseTo(expectedDb, 1);
    }
  });

  it('VU: a sine step reaches 99 % of its final deflection in 300 ms +/- 10 %, and falls back the same (IEC 60268-17 VU response time)', () => {
    const meter = new TimeWeightedLevelMeter(mono);
    const stepMs = 1000;
    const ms = fs / 1000;
    // 997 Hz is not commensurate with 48 kHz, so the sampled rectified mean is 2A/pi (at 1 kHz it is 0.012 dB low).
    const tone = sine(ms * stepMs, 1, 997);
    const readings: number[] = [];
    for (let t = 0; t < stepMs; t++) {
      meter.push({ channelData: [tone.subarray(t * ms, (t + 1) * ms)], frames: ms });
      readings.push(meter.current(0).vuDbfs ?? -Infinity);
    }
    const finalDb = readings[readings.length - 1];
    // Steady sine reads its RMS (VU scale calibrated in sine RMS).
    expect(finalDb).toBeCloseTo(-3.0103, 3);
    // Deflection is linear in amplitude: 99 % = final + 20 log10(0.99).
    const riseMs = readings.findIndex((db) => db >= finalDb + 20 * Math.log10(0.99)) + 1;
    expect(riseMs).toBeGreaterThanOrEqual(270);
    expect(riseMs).toBeLessThanOrEqual(330);
    let fallMs: number | null = null;
    const zeros = new Float32Array(ms);
    for (let t = 0; t < stepMs; t++) {
      meter.push({ channelData: [zeros], frames: ms });
      const vu = meter.current(0).vuDbfs;
      if (fallMs === null && (vu === null || vu <= finalDb + 20 * Math.log10(0.01))) fallMs = t + 1;
    }
    expect(fallMs).toBeGreaterThanOrEqual(270);
    expect(fallMs).toBeLessThanOrEqual(330);
  });

  it('VU averages the rectified signal: a square reads the sine form factor pi/(2 sqrt2) = +0.91 dB above its RMS (handbook)', () => {
    const meter = new TimeWeightedLevelMeter(mono);
    const x = new Float32Array(fs * 3);
    for (let i = 0; i < x.length; i++) x[i] = i % 48 < 24 ? 0.5 : -0.5;
    pushAll(meter, [x]);
    expect(meter.result().channels[0].maxVuDbfs).toBeCloseTo(20 * Math.log10(0.5) + 0.9121, 3);
    expect(meter.result().channels[0].maxFastDbfs).toBeCloseTo(20 * Math.log10(0.5), 3);
  });

  it('reports a silent channel as null and keeps channels apart', () => {
    const meter = new TimeWeightedLevelMeter(stereo);
    pushAll(meter, [sine(fs, 0.1), new Float32Array(fs)]);
    const [a, b] = meter.result().channels;
    expect(a.maxSlowDbfs).toBeLessThan(-20);
    expect(a.maxSlowDbfs).toBeGreaterThan(-30);
    expect(b).toEqual({ channel: 1, maxFastDbfs: null, maxSlowDbfs: null, maxVuDbfs: null });
  });

  it('gives identical results however the stream is cut into blocks', () => {
    let seed = 7;
    const rand = () => ((seed = (seed * 1_103_515_245 + 12_345) >>> 0) / 2 ** 32) * 2 - 1;
    const frames = 50_003;
    const chans = [new Float32Array(frames), new Float32Array(frames)];
    for (let i = 0; i < frames; i++) {
      chans[0][i] = i < 20_000 ? rand() * 0.5 : 0; // long zero tail exercises the denormal flush
      chans[1][i] = rand() * (i / frames);
    }
    const run = (blockFrames: number) => {
      const m = new TimeWeightedLevelMeter(stereo);
      pushAll(m, chans, blockFrames);
      return m.result();
    };
    const whole = run(1_000_000);
    expect(run(7)).toEqual(whole);
    expect(run(4096)).toEqual(whole);
    expect(run(1)).toEqual(whole);
  });
});
