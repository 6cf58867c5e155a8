// The document's loudness series: momentary at 10 Hz and short-term at 1 Hz, rounded to 0.01 LU,
// null where there is no value, built from the loudness meter's compact (NaN = none) series.
import { describe, expect, it } from 'vitest';
import { defaultChannelLabels } from '../../src/analysis/audio.ts';
import { AnalysisRunner } from '../../src/analysis/runner.ts';
import { buildAnalysisDocument } from '../../src/engine/document.ts';
import type { AudioFormat } from '../../src/decode/types.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';

const SAMPLE_RATE = 48000;

function analyse() {
  const info = { sampleRate: SAMPLE_RATE, channels: 2, channelLabels: defaultChannelLabels(2) };
  const runner = new AnalysisRunner(info);
  // 1 s of digital silence, then 5 s of 1 kHz at -20 dBFS peak in both channels.
  for (const block of toneBlocks({
    sampleRate: SAMPLE_RATE,
    channels: 2,
    segments: [
      { seconds: 1, peakDbfs: null },
      { seconds: 5, peakDbfs: -20 },
    ],
  }))
    runner.push(block);
  const measurements = runner.result();
  const format: AudioFormat = {
    container: 'wav',
    encoding: 'pcm_f32le',
    sampleRate: SAMPLE_RATE,
    channels: 2,
    bitsPerSample: 32,
    frames: 6 * SAMPLE_RATE,
    durationSeconds: 6,
    channelLabels: info.channelLabels,
    channelMask: null,
    timeReferenceSamples: null,
  };
  return { measurements, document: buildAnalysisDocument(format, measurements, [], null, 0) };
}

describe('analysis document loudness series', () => {
  const { measurements, document } = analyse();
  const momentary = document.series.momentary.lufs;
  const shortTerm = document.series.shortTerm.lufs;

  it('has one momentary point per 100 ms: null before the first 400 ms window and for digital silence (BS.1770-5 eq. (3))', () => {
    expect(momentary).toHaveLength(60);
    // Windows ending at 0.1-0.3 s are not full; those ending at 0.4-1.0 s hold only silence.
    expect(momentary.slice(0, 10)).toEqual(new Array(10).fill(null));
    // Stereo 1 kHz at -20 dBFS peak: -23.01 per channel (BS.1770-5, text after eq. (7)) + 3.01 for two channels.
    for (const v of momentary.slice(14)) expect(v!).toBeCloseTo(-20, 1);
  });

  it('has one short-term point per second, the 3 s window ending on that second (EBU Tech 3341: short-term loudness uses a 3 s window)', () => {
    expect(shortTerm).toHaveLength(6);
    expect(shortTerm.slice(0, 2)).toEqual([null, null]);
    // The 3 s ending at 3 s holds 1 s of silence: 10*log10(2/3) = -1.76 LU under the tone.
    expect(shortTerm[2]!).toBeCloseTo(-21.76, 1);
    expect(shortTerm[5]!).toBeCloseTo(-20, 1);
    // The 1 Hz points are the meter's 10 Hz values at whole seconds.
    for (let s = 3; s <= 6; s++)
      expect(shortTerm[s - 1]).toBe(Math.round(measurements.loudness.shortTermLufs[10 * s - 1] * 100) / 100);
  });

  it('rounds every point to 0.01 and holds only numbers and null, which JSON keeps as they are (common practice)', () => {
    for (const v of [...momentary, ...shortTerm])
      if (v !== null) expect(Math.abs(v * 100 - Math.round(v * 100))).toBeLessThan(1e-6);
    // NaN or Infinity would come back from JSON as null and differ here.
    expect(JSON.parse(JSON.stringify(document.series))).toEqual(document.series);
  });
});
