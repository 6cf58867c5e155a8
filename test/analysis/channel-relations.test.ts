import { describe, expect, it } from 'vitest';
import { defaultChannelLabels, type StreamInfo } from '../../src/analysis/audio.ts';
import {
  ChannelRelationMeter,
  type ChannelRelationOptions,
  type ChannelRelationResult,
} from '../../src/analysis/channel-relations.ts';

const fs = 8000;
const info = (channels: number): StreamInfo => ({
  sampleRate: fs,
  channels,
  channelLabels: defaultChannelLabels(channels),
});

function measure(
  streamInfo: StreamInfo,
  channels: Float32Array[],
  blockFrames = 65_536,
  options?: ChannelRelationOptions,
): ChannelRelationResult {
  const meter = new ChannelRelationMeter(streamInfo, options);
  const total = channels[0].length;
  for (let s = 0; s < total; s += blockFrames) {
    const e = Math.min(total, s + blockFrames);
    meter.push({ channelData: channels.map((c) => c.subarray(s, e)), frames: e - s });
  }
  return meter.result();
}

function noise(frames: number, seed: number, amplitude = 0.3): Float32Array {
  let state = seed >>> 0;
  const x = new Float32Array(frames);
  for (let i = 0; i < frames; i++) {
    state = (state * 1_103_515_245 + 12_345) >>> 0;
    x[i] = amplitude * ((state / 2 ** 32) * 2 - 1);
  }
  return x;
}

const negate = (x: Float32Array) => x.map((v) => -v);
const kinds = (r: ChannelRelationResult) => r.events.map((e) => [e.kind, e.channel, e.otherChannel]);

describe('ChannelRelationMeter', () => {
  it('reports a channel of exact zeros as dead for the whole stream', () => {
    const frames = 3 * fs;
    const r = measure(info(3), [noise(frames, 1), noise(frames, 2), new Float32Array(frames)]);
    expect(r.deadChannels).toEqual([2]);
    expect(r.events.filter((e) => e.kind === 'dead_channel')).toMatchObject([
      { channel: 2, startFrame: 0, endFrame: frames },
    ]);
    const withDead = r.pairs.filter((p) => p.otherChannel === 2);
    expect(withDead.every((p) => p.correlation === null && !p.identical && !p.inverted)).toBe(true);
  });

  it('finds an identical copy and a polarity-inverted copy', () => {
    const frames = 2 * fs;
    const a = noise(frames, 3);
    const r = measure(info(3), [a, a.slice(), negate(a)]);
    // Inverted pairs are antiphase in every window as well.
    expect(kinds(r).filter(([k]) => k === 'phase_problem')).toEqual([
      ['phase_problem', 0, 2],
      ['phase_problem', 1, 2],
    ]);
    expect(kinds(r).filter(([k]) => k !== 'phase_problem')).toEqual([
      ['duplicate_channel', 1, 0],
      ['inverted_channel', 2, 0],
      ['inverted_channel', 2, 1],
    ]);
    expect(r.pairs[0]).toMatchObject({ identical: true, inverted: false, correlation: 1 });
    expect(r.pairs[1]).toMatchObject({ identical: false, inverted: true, correlation: -1 });
  });

  it('does not call a copy identical when one sample differs, but the near rule (r > 0.9999, RMS within 0.01 dB) still flags it', () => {
    const frames = 2 * fs;
    const a = noise(frames, 4);
    const b = a.slice();
    b[12_345] += 0.01;
    const r = measure(info(2), [a, b]);
    expect(r.pairs[0]).toMatchObject({ identical: false, nearIdentical: true });
    expect(kinds(r)).toEqual([['duplicate_channel', 1, 0]]);
    // A copy 0.1 dB lower is perfectly correlated but fails the level rule.
    const quieter = a.map((v) => v * 10 ** (-0.1 / 20));
    const q = measure(info(2), [a, quieter]);
    expect(q.pairs[0].correlation).toBeCloseTo(1, 9);
    expect(q.pairs[0].nearIdentical).toBe(false);
    expect(q.events).toHaveLength(0);
  });

  it('reads uncorrelated noise near 0 and partly shared noise near 0.5 (r = shared power / total power, handbook)', () => {
    const frames = 6 * fs;
    const s = noise(frames, 5);
    const n1 = noise(frames, 6);
    const n2 = noise(frames, 7);
    expect(Math.abs(measure(info(2), [n1, n2]).pairs[0].correlation ?? 1)).toBeLessThan(0.03);
    const l = s.map((v, i) => v + n1[i]);
    const r = s.map((v, i) => v + n2[i]);
    expect(measure(info(2), [l, r]).pairs[0].correlation).toBeCloseTo(0.5, 1);
  });

  it('detects an antiphase stretch in the middle of normal stereo as one merged phase_problem event', () => {
    const frames = 15 * fs;
    const s = noise(frames, 8);
    const n = noise(frames, 9, 0.1);
    const left = s;
    const right = s.map((v, i) => v + n[i]);
    for (let i = 6 * fs; i < 12 * fs; i++) right[i] = -left[i]; // windows 2 and 3 (3 s each)
    const r = measure(info(2), [left, right]);
    const phase = r.events.filter((e) => e.kind === 'phase_problem');
    expect(phase).toHaveLength(1);
    expect(phase[0]).toMatchObject({
      channel: 0,
      otherChannel: 1,
      startFrame: 6 * fs,
      endFrame: 12 * fs,
      count: 2,
      startSeconds: 6,
    });
    expect(phase[0].peakValue).toBeCloseTo(-1, 6);
    expect(r.pairs[0].inverted).toBe(false);
    expect(r.pairs[0].phaseProblemWindows).toBe(2);
    expect(r.pairs[0].correlation).toBeGreaterThan(0); // the whole stream still looks fine
  });

  it('ignores antiphase below the signal floor and on LFE pairs', () => {
    const frames = 6 * fs;
    const quiet = noise(frames, 10, 0.001); // about -65 dBFS RMS, below the -50 dBFS floor
    expect(measure(info(2), [quiet, negate(quiet)]).events.filter((e) => e.kind === 'phase_problem')).toHaveLength(0);
    const loud = noise(frames, 11);
    const six = [0, 1, 2, 3, 4, 5].map((k) => noise(frames, 20 + k));
    six[3] = negate(loud); // LFE
    six[0] = loud; // L
    const r = measure(info(6), six);
    expect(r.events.filter((e) => e.kind === 'phase_problem')).toHaveLength(0);
    expect(kinds(r)).toEqual([['inverted_channel', 3, 0]]); // copy checks still cover LFE
    expect(r.pairs.find((p) => p.channel === 0 && p.otherChannel === 3)?.phaseChecked).toBe(false);
  });

  it('gives identical results cut as 1 block, 7-frame and 4096-frame blocks', () => {
    const frames = 10 * fs + 77;
    const a = noise(frames, 12);
    const b = a.map((v, i) => (i >= 3 * fs && i < 9 * fs ? -v : v * 0.9));
    const chans = [a, b, new Float32Array(frames)];
    const whole = measure(info(3), chans, 1_000_000);
    expect(whole.events.length).toBeGreaterThan(1);
    expect(measure(info(3), chans, 7)).toEqual(whole);
    expect(measure(info(3), chans, 4096)).toEqual(whole);
    expect(measure(info(3), chans, 1)).toEqual(whole);
  });

  it('caps events but keeps counting', () => {
    const frames = fs;
    const chans = Array.from({ length: 8 }, () => new Float32Array(frames));
    const r = measure(info(8), chans, 4096, { maxEvents: 3 });
    expect(r.deadChannels).toHaveLength(8);
    expect(r.events).toHaveLength(3);
    expect(r.eventsTotal).toBe(8);
    expect(r.eventsTruncated).toBe(true);
  });
});
