import { describe, expect, it } from 'vitest';
import { defaultChannelLabels, type StreamInfo } from '../../src/analysis/audio.ts';
import { SilenceMeter, type SilenceMeterOptions, type SilenceResult } from '../../src/analysis/silence.ts';

const fs = 8000;
const stereo: StreamInfo = { sampleRate: fs, channels: 2, channelLabels: defaultChannelLabels(2) };
const mono: StreamInfo = { sampleRate: fs, channels: 1, channelLabels: defaultChannelLabels(1) };

function measure(
  info: StreamInfo,
  channels: Float32Array[],
  blockFrames: number,
  options?: SilenceMeterOptions,
): SilenceResult {
  const meter = new SilenceMeter(info, options);
  const total = channels[0].length;
  for (let s = 0; s < total; s += blockFrames) {
    const e = Math.min(total, s + blockFrames);
    meter.push({ channelData: channels.map((c) => c.subarray(s, e)), frames: e - s });
  }
  return meter.result();
}

/** Square wave of +/-amplitude between two times (seconds); a square never dips below its amplitude. */
function tone(x: Float32Array, fromSeconds: number, toSeconds: number, amplitude: number): void {
  for (let i = Math.round(fromSeconds * fs); i < Math.round(toSeconds * fs); i++)
    x[i] = i % 16 < 8 ? amplitude : -amplitude;
}

const spans = (r: SilenceResult) => r.events.map((e) => [e.channel, e.startFrame, e.endFrame]);

// 12 s stereo. Both: 0-0.5 s zeros (head), 0.5-3 s signal, 3-6 s at -70 dBFS, 6-7 s signal, 7-8.5 s zeros
// (1.5 s, below the 2 s minimum). Left: signal 8.5-10 s, zeros after (tail 2 s). Right: zeros from 7 s on.
const seconds = 12;
const left = new Float32Array(seconds * fs);
const right = new Float32Array(seconds * fs);
for (const x of [left, right]) {
  tone(x, 0.5, 3, 0.5);
  tone(x, 3, 6, 10 ** (-70 / 20));
  tone(x, 6, 7, 0.5);
}
tone(left, 8.5, 10, 0.5);

describe('SilenceMeter', () => {
  it('reports regions below -60 dBFS for >= 2 s, exact to the sample, per channel and all channels (ffmpeg silencedetect defaults -60 dB / 2 s, common practice)', () => {
    const r = measure(stereo, [left, right], 65_536);
    expect(spans(r)).toEqual([
      [null, 24_000, 48_000],
      [0, 24_000, 48_000],
      [1, 24_000, 48_000],
      [null, 80_000, 96_000], // still open at the end: closes at the last frame
      [0, 80_000, 96_000],
      [1, 56_000, 96_000], // right never sounds again after 7 s
    ]);
    expect(r.events[0].peakValue).toBeCloseTo(-70, 4);
    expect(r.events[3].peakValue).toBeUndefined(); // digital silence has no level
    expect(r.events[5]).toMatchObject({ kind: 'silence', startSeconds: 7, endSeconds: 12 });
    expect(r.channels).toEqual([
      { channel: 0, regions: 2, silentSeconds: 5 },
      { channel: 1, regions: 2, silentSeconds: 8 },
    ]);
    expect(r.all).toEqual({ regions: 2, silentSeconds: 5 });
  });

  it('gives head and tail silence even below the minimum, and the longest internal gap', () => {
    const r = measure(stereo, [left, right], 65_536);
    expect(r.headSilenceSeconds).toBe(0.5);
    expect(r.tailSilenceSeconds).toBe(2);
    expect(r.allSilent).toBe(false);
    expect(r.longestInternalGapSeconds).toBe(3);
    expect(r.longestInternalGapStartFrame).toBe(24_000);
    // The 1.5 s gap at 7 s is not an event, but it is the longest gap once the 3 s one is filled in.
    const filled = [left.slice(), right.slice()];
    for (const x of filled) tone(x, 3, 6, 0.5);
    const f = measure(stereo, filled, 4096);
    expect(f.longestInternalGapSeconds).toBe(1.5);
    expect(f.longestInternalGapStartFrame).toBe(56_000);
    expect(spans(f).some(([c, start]) => c === null && start === 56_000)).toBe(false);
  });

  it('counts internal gaps from 1 ms (our definition): zero crossings of a waveform are not gaps', () => {
    const x = new Float32Array(fs);
    tone(x, 0, 1, 0.5);
    x.fill(0, 1000, 1004); // 0.5 ms: a coincidence of near-zero samples, not a gap
    expect(measure(mono, [x], 4096).longestInternalGapSeconds).toBe(0);
    x.fill(0, 4000, 4016); // 2 ms: a gap
    for (const blockFrames of [7, 33, 4096]) {
      const r = measure(mono, [x], blockFrames);
      expect(r.longestInternalGapSeconds).toBe(0.002);
      expect(r.longestInternalGapStartFrame).toBe(4000);
    }
  });

  it('gives identical results cut as 1 block, 7-frame and 4096-frame blocks', () => {
    const whole = measure(stereo, [left, right], 1_000_000);
    expect(measure(stereo, [left, right], 7)).toEqual(whole);
    expect(measure(stereo, [left, right], 4096)).toEqual(whole);
    expect(measure(stereo, [left, right], 1)).toEqual(whole);
  });

  it('decides per sample: one sample at the threshold splits a region; one just below does not', () => {
    const x = new Float32Array(6 * fs);
    x[3 * fs] = 0.001; // exactly -60 dBFS (Float32 rounds it up a hair): not below
    expect(spans(measure(mono, [x], 4096))).toEqual([
      [null, 0, 24_000],
      [0, 0, 24_000],
      [null, 24_001, 48_000],
      [0, 24_001, 48_000],
    ]);
    x[3 * fs] = 0.000_99;
    expect(spans(measure(mono, [x], 4096))).toEqual([
      [null, 0, 48_000],
      [0, 0, 48_000],
    ]);
  });

  it('treats an all-silent stream as head = tail = duration', () => {
    const r = measure(stereo, [new Float32Array(fs), new Float32Array(fs)], 100);
    expect(r.allSilent).toBe(true);
    expect(r.headSilenceSeconds).toBe(1);
    expect(r.tailSilenceSeconds).toBe(1);
    expect(r.longestInternalGapSeconds).toBe(0);
    expect(r.events).toHaveLength(0); // 1 s < 2 s minimum
  });

  it('follows the configured threshold and minimum duration', () => {
    const r = measure(stereo, [left, right], 4096, { thresholdDbfs: -80, minDurationSeconds: 1 });
    // -70 dBFS is no longer silent; the 1.5 s zero gap now qualifies.
    expect(spans(r).filter(([c]) => c === null)).toEqual([
      [null, 56_000, 68_000],
      [null, 80_000, 96_000],
    ]);
  });

  it('caps the event list but keeps counting', () => {
    const x = new Float32Array(20 * fs);
    for (let k = 1; k < 20; k += 2) tone(x, k, k + 0.001, 0.5); // ten short clicks, 1 s silence between
    const r = measure(mono, [x], 4096, { minDurationSeconds: 0.5, maxEvents: 4 });
    expect(r.events).toHaveLength(4);
    expect(r.eventsTotal).toBe(22); // 11 regions, each as channel 0 and all channels
    expect(r.eventsTruncated).toBe(true);
    expect(r.all.regions).toBe(11);
  });
});
