import { describe, expect, it } from 'vitest';
import { defaultChannelLabels, type StreamInfo } from '../../src/analysis/audio.ts';
import { ClippingMeter, type ClippingMeterOptions, type ClippingResult } from '../../src/analysis/clipping.ts';

const fs = 48_000;
const stereo: StreamInfo = { sampleRate: fs, channels: 2, channelLabels: defaultChannelLabels(2) };
const mono: StreamInfo = { sampleRate: fs, channels: 1, channelLabels: defaultChannelLabels(1) };

function measure(
  info: StreamInfo,
  channels: Float32Array[],
  blockFrames: number,
  options?: ClippingMeterOptions,
): ClippingResult {
  const meter = new ClippingMeter(info, options);
  const total = channels[0].length;
  for (let s = 0; s < total; s += blockFrames) {
    const e = Math.min(total, s + blockFrames);
    meter.push({ channelData: channels.map((c) => c.subarray(s, e)), frames: e - s });
  }
  return meter.result();
}

function fill(x: Float32Array, start: number, length: number, value: number): void {
  x.fill(value, start, start + length);
}

const spans = (r: ClippingResult) => r.events.map((e) => [e.channel, e.startFrame, e.endFrame]);

// Stereo test signal (a quiet ramp elsewhere) with runs placed on and across block edges.
const frames = 10_000;
const left = new Float32Array(frames).map((_, i) => 0.3 * Math.sin(i / 10));
const right = new Float32Array(frames).map((_, i) => 0.3 * Math.cos(i / 10));
fill(left, 100, 3, 1); //          run of 3: counted at N = 3
fill(left, 200, 2, 1); //          run of 2: not counted
fill(left, 4094, 6, -1); //        negative run across the 4096 edge
fill(left, 8188, 10, 0.999); //   -0.0087 dB: within the 0.01 dB threshold
fill(left, 8300, 5, 0.998); //     -0.0174 dB: outside it
left.set([1, -1, 1, -1], 8400); // alternating polarity is not a flat top
fill(right, 4090, 4, 1); //        ends before the left run starts
fill(right, 9995, 5, 1); //        open at end of stream: closes at the last frame
left[300] = 1;
left[301] = 1;
left[302] = -1; // polarity change splits a run: 2 + 1, neither counted

describe('ClippingMeter', () => {
  it('finds runs of >= 3 same-polarity samples within 0.01 dB of full scale, exact to the sample (N = 3, threshold -0.01 dBFS: common practice)', () => {
    const r = measure(stereo, [left, right], 65_536);
    expect(spans(r)).toEqual([
      [0, 100, 103],
      [1, 4090, 4094],
      [0, 4094, 4100],
      [0, 8188, 8198],
      [1, 9995, 10_000],
    ]);
    expect(r.channels).toEqual([
      { channel: 0, runs: 3, clippedSamples: 3 + 6 + 10, longestRunSamples: 10 },
      { channel: 1, runs: 2, clippedSamples: 4 + 5, longestRunSamples: 5 },
    ]);
    expect(r.totalRuns).toBe(5);
    expect(r.totalClippedSamples).toBe(28);
    expect(r.events[0]).toMatchObject({ kind: 'clipping', peakValue: 0, count: 3, startSeconds: 100 / fs });
    expect(r.events[3].peakValue).toBeCloseTo(20 * Math.log10(0.999), 4);
  });

  it('gives identical results cut as 1 block, 7-frame and 4096-frame blocks (runs merged across edges)', () => {
    const whole = measure(stereo, [left, right], 65_536);
    expect(measure(stereo, [left, right], 7)).toEqual(whole);
    expect(measure(stereo, [left, right], 4096)).toEqual(whole);
    expect(measure(stereo, [left, right], 1)).toEqual(whole);
  });

  it('counts runs of 2 when N = 2 and every full-scale sample when N = 1', () => {
    expect(measure(stereo, [left, right], 4096, { minRunSamples: 2 }).channels[0].runs).toBe(5); // + 200 and 300
    // N = 1: 3 + 2 + 2 + 1 + 6 + 10 + 4 (alternating) on the left
    expect(measure(stereo, [left, right], 4096, { minRunSamples: 1 }).channels[0].clippedSamples).toBe(28);
  });

  it('takes the threshold in dB: at -0.1 dBFS the 0.998 run counts too', () => {
    const r = measure(stereo, [left, right], 4096, { thresholdDbfs: -0.1 });
    expect(spans(r).filter(([c]) => c === 0)).toContainEqual([0, 8300, 8305]);
    expect(r.thresholdLinear).toBeCloseTo(10 ** (-0.1 / 20), 12);
  });

  it('caps the event list but keeps counting past the cap', () => {
    const x = new Float32Array(2000);
    for (let k = 0; k < 20; k++) fill(x, k * 100, 4, 1);
    const r = measure(mono, [x], 33, { maxEvents: 5 });
    expect(r.events).toHaveLength(5);
    expect(r.events.map((e) => e.startFrame)).toEqual([0, 100, 200, 300, 400]);
    expect(r.eventsTotal).toBe(20);
    expect(r.eventsTruncated).toBe(true);
    expect(r.channels[0].runs).toBe(20);
    expect(r.totalClippedSamples).toBe(80);
  });

  it('rejects a non-positive threshold and a fractional run length', () => {
    expect(() => new ClippingMeter(mono, { thresholdLinear: 0 })).toThrow(/threshold/);
    expect(() => new ClippingMeter(mono, { minRunSamples: 2.5 })).toThrow(/minRunSamples/);
  });
});
