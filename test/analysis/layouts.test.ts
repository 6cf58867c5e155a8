// Channel weights from loudspeaker positions (ITU-R BS.1770-5 Annex 3 Table 4 over ITU-R BS.2051
// nominal positions) and the loudness of sines in every channel of 7.1, 7.1.4, 9.1.6 and 22.2.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { ChannelLabel } from '../../src/analysis/audio.ts';
import { ChannelRelationMeter } from '../../src/analysis/channel-relations.ts';
import { biquadGain, channelWeight, highpassCoefficients, shelfCoefficients } from '../../src/analysis/k-weighting.ts';
import { LAYOUTS, loudnessWeight, SPEAKER_POSITIONS, weightAtPosition } from '../../src/analysis/layouts.ts';
import { LoudnessMeter } from '../../src/analysis/loudness.ts';
import { labelsFromChannelMask, openAudioFile } from '../../src/decode/index.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';
import { hasTool } from '../helpers/tools.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-layouts-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const RATE = 48000;
const AMPLITUDE = 0.1; // -20 dBFS peak in every channel

const sines = (channels: number, seconds = 2) =>
  toneBlocks({
    sampleRate: RATE,
    channels,
    segments: [{ seconds, frequencyHz: 997, peakDbfs: 20 * Math.log10(AMPLITUDE) }],
  });

function integrated(labels: readonly ChannelLabel[], seconds = 2): number | null {
  const meter = new LoudnessMeter({ sampleRate: RATE, channels: labels.length, channelLabels: labels });
  for (const block of sines(labels.length, seconds)) meter.push(block);
  return meter.result().integratedLufs;
}

/**
 * ITU-R BS.1770-5 eq. (2): LK = -0.691 + 10 log10(sum Gi zi), zi the mean square of the K-weighted
 * channel. A sine of amplitude A has mean square A^2/2; at 997 Hz the K filter gains +0.691 dB
 * (Note 1 to eq. (2)), which the -0.691 cancels: LK = 10 log10(sum Gi A^2/2).
 */
const closedForm = (weights: readonly number[]) =>
  10 * Math.log10((weights.reduce((sum, g) => sum + g, 0) * (AMPLITUDE * AMPLITUDE)) / 2);

describe('channel weights from BS.2051 positions (ITU-R BS.1770-5 Annex 3 Table 4)', () => {
  it('gives 1.41 for azimuth 60-120 degrees either side below 30 degrees elevation, 1.0 elsewhere', () => {
    // Table 4 rows; the closed bounds at 60 and 120 are from memory.
    expect(weightAtPosition(90, 0)).toBe(1.41);
    expect(weightAtPosition(-110, 0)).toBe(1.41);
    expect(weightAtPosition(60, 0)).toBe(1.41);
    expect(weightAtPosition(120, 29)).toBe(1.41);
    expect(weightAtPosition(30, 0)).toBe(1);
    expect(weightAtPosition(135, 0)).toBe(1);
    expect(weightAtPosition(-150, 0)).toBe(1);
    expect(weightAtPosition(90, 30)).toBe(1);
    expect(weightAtPosition(110, 45)).toBe(1);
    expect(weightAtPosition(0, 90)).toBe(1);
    expect(weightAtPosition(250, 0)).toBe(1.41); // -110 degrees
  });

  it('weights each role by its position; LFE and LFE2 are excluded (BS.1770-5 Annex 1)', () => {
    const sides: ChannelLabel[] = ['Ls', 'Rs', 'Lss', 'Rss', 'Lw', 'Rw'];
    for (const label of Object.keys(SPEAKER_POSITIONS) as ChannelLabel[]) {
      const expected = label === 'LFE' || label === 'LFE2' ? 0 : sides.includes(label) ? 1.41 : 1;
      expect([label, loudnessWeight(label)]).toEqual([label, expected]);
      expect(channelWeight(label)).toBe(loudnessWeight(label));
    }
  });

  it('keeps the BS.2051 loudspeaker labels beside the positions (BS.2094 common definitions)', () => {
    expect(SPEAKER_POSITIONS.Ls).toEqual({ bs2051: 'M+110', azimuthDegrees: 110, elevationDegrees: 0 });
    expect(SPEAKER_POSITIONS.Lss?.bs2051).toBe('M+090');
    expect(SPEAKER_POSITIONS.Lrs?.bs2051).toBe('M+135');
    expect(SPEAKER_POSITIONS.Lw?.bs2051).toBe('M+060');
    expect(SPEAKER_POSITIONS.Tsl?.bs2051).toBe('U+090');
    expect(SPEAKER_POSITIONS.Bfr?.bs2051).toBe('B-045');
  });
});

describe('the second LFE of 22.2', () => {
  it('is left out of the phase check as LFE is (channel-relations.ts)', () => {
    const labels: ChannelLabel[] = ['L', 'LFE2', 'LFE'];
    const meter = new ChannelRelationMeter({ sampleRate: 8000, channels: 3, channelLabels: labels });
    const loud = Float32Array.from({ length: 8000 * 6 }, (_, i) => 0.3 * Math.sin(i * 0.37) * Math.sin(i * 0.0011));
    meter.push({ channelData: [loud, loud.map((v) => -v), loud.map((v) => -v)], frames: loud.length });
    const result = meter.result();
    expect(result.pairs.map((p) => p.phaseChecked)).toEqual([false, false, false]);
    expect(result.events.filter((e) => e.kind === 'phase_problem')).toHaveLength(0);
  });
});

describe('WAVE channel masks (Microsoft ksmedia.h SPEAKER_* bit order)', () => {
  it('7.1 (0x63F): side pair SL/SR at 90 degrees 1.41, back pair BL/BR at 135 degrees 1.0', () => {
    const labels = labelsFromChannelMask(0x63f, 8);
    expect(labels).toEqual(['L', 'R', 'C', 'LFE', 'Lrs', 'Rrs', 'Lss', 'Rss']);
    expect(labels.map(channelWeight)).toEqual([1, 1, 1, 0, 1, 1, 1.41, 1.41]);
    expect(labels).toEqual([...LAYOUTS['7.1']]);
  });

  it('7.1.4 (0x2D63F): plus TFL TFR TBL TBR on the upper layer (30 degrees elevation) at 1.0', () => {
    const labels = labelsFromChannelMask(0x2d63f, 12);
    expect(labels).toEqual(['L', 'R', 'C', 'LFE', 'Lrs', 'Rrs', 'Lss', 'Rss', 'Tfl', 'Tfr', 'Tbl', 'Tbr']);
    expect(labels.map(channelWeight)).toEqual([1, 1, 1, 0, 1, 1, 1.41, 1.41, 1, 1, 1, 1]);
    expect(labels).toEqual([...LAYOUTS['7.1.4']]);
  });
});

describe('997 Hz sine in every channel reads 10 log10(sum Gi A^2/2) LKFS (ITU-R BS.1770-5 eq. (2))', () => {
  const cases: [keyof typeof LAYOUTS, number][] = [
    // sum of Gi over the channels, from Table 4 and the positions above
    ['7.1', 5 + 2 * 1.41],
    ['7.1.4', 9 + 2 * 1.41],
    ['9.1.6', 11 + 4 * 1.41],
    ['22.2', 18 + 4 * 1.41],
  ];
  for (const [layout, sumOfWeights] of cases) {
    it(`${layout}: sum of weights ${sumOfWeights.toFixed(2)}`, () => {
      const labels = LAYOUTS[layout];
      expect(labels.map(channelWeight).reduce((s, g) => s + g, 0)).toBeCloseTo(sumOfWeights, 12);
      const reading = integrated(labels);
      expect(reading).not.toBeNull();
      expect(Math.abs((reading ?? 0) - closedForm(labels.map(channelWeight)))).toBeLessThan(0.01);
      // Tighter: the derived filter's own gain at 997 Hz in place of the rounded 0.691 dB.
      const kGainDb =
        20 *
        Math.log10(biquadGain(shelfCoefficients(RATE), 997, RATE) * biquadGain(highpassCoefficients(RATE), 997, RATE));
      expect(Math.abs((reading ?? 0) - (closedForm(labels.map(channelWeight)) - 0.691 + kGainDb))).toBeLessThan(0.002);
    });
  }
});

describe.skipIf(!hasTool('ffmpeg'))('ffmpeg ebur128 on 7.1 and 7.1.4 files (Debian ffmpeg)', () => {
  // ffmpeg weights by WAVE speaker, not by position: 1.41 for every back, side and top-back
  // speaker (af_ebur128.c BACK_MASK), 0 for LFE, 1.0 otherwise. Table 4 gives the back pair
  // (135 degrees) and the top-back pair (30 degrees up) 1.0.
  const cases: { layout: '7.1' | '7.1.4'; mask: number; ffmpegWeights: number[] }[] = [
    { layout: '7.1', mask: 0x63f, ffmpegWeights: [1, 1, 1, 0, 1.41, 1.41, 1.41, 1.41] },
    { layout: '7.1.4', mask: 0x2d63f, ffmpegWeights: [1, 1, 1, 0, 1.41, 1.41, 1.41, 1.41, 1, 1, 1.41, 1.41] },
  ];
  for (const { layout, mask, ffmpegWeights } of cases) {
    it(`${layout}: ffmpeg reads 10 log10(its sum / Table 4 sum) above us`, async () => {
      const channels = ffmpegWeights.length;
      const path = join(dir, `sines-${layout}.wav`);
      await writeWavFile(
        path,
        { sampleRate: RATE, channels, bitsPerSample: 32, float: true, channelMask: mask },
        (function* () {
          for (const block of sines(channels, 5)) yield [...block.channelData];
        })(),
      );
      const decoded = await openAudioFile(path);
      const labels = decoded.format.channelLabels;
      expect(labels).toEqual([...LAYOUTS[layout]]);
      const meter = new LoudnessMeter({ sampleRate: RATE, channels, channelLabels: labels });
      for await (const block of decoded.blocks) meter.push(block);
      const ours = meter.result().integratedLufs ?? 0;
      const ffmpegLufs = ffmpegIntegratedLufs(path);
      // ffmpeg's integrated loudness comes from a histogram of 0.01 LU bins (HIST_GRAIN, from memory).
      expect(Math.abs(ffmpegLufs - closedForm(ffmpegWeights))).toBeLessThan(0.011);
      expect(Math.abs(ours - closedForm(labels.map(channelWeight)))).toBeLessThan(0.01);
      const ratioDb =
        10 *
        Math.log10(ffmpegWeights.reduce((a, g) => a + g, 0) / labels.map(channelWeight).reduce((a, g) => a + g, 0));
      expect(ratioDb).toBeGreaterThan(0.4);
      expect(Math.abs(ffmpegLufs - ours - ratioDb)).toBeLessThan(0.02);
    });
  }
});

/** The last integrated loudness ffmpeg's ebur128 filter reports (frame metadata, 3 decimals). */
function ffmpegIntegratedLufs(path: string): number {
  const filter = 'ebur128=metadata=1,ametadata=mode=print:key=lavfi.r128.I';
  const run = spawnSync('ffmpeg', ['-nostats', '-hide_banner', '-i', path, '-af', filter, '-f', 'null', '-'], {
    encoding: 'utf8',
    maxBuffer: 64 * 1024 * 1024,
  });
  expect(run.status).toBe(0);
  const values = [...run.stderr.matchAll(/lavfi\.r128\.I=(-?\d+\.\d+)/g)].map((m) => Number(m[1]));
  expect(values.length).toBeGreaterThan(0);
  return values[values.length - 1];
}
