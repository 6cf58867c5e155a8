// The fold-down rules end to end: generated WAV files, analysed with the profile's options, judged.
import { afterAll, describe, expect, it } from 'vitest';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { analysisOptionsForProfile, evaluate, parseProfile, type QcReport } from '../../src/profiles/index.ts';
import type { ToneSegment } from '../../src/selftest/signals.ts';
import { checkFile, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

const profileJson = {
  id: 'fold-down-test',
  name: 'Fold-down test',
  version: '1.0.0',
  description: 'Downmix and mono rules only',
  basis: 'house rule',
  rules: [
    { id: 'dm-loudness', type: 'downmix-loudness', severity: 'fail', targetLufs: -23, toleranceLu: 1 },
    { id: 'dm-peak', type: 'downmix-true-peak', severity: 'fail', maxDbtp: -1 },
    { id: 'dm-clip', type: 'downmix-clipping', severity: 'fail' },
    { id: 'mono', type: 'mono-compatibility', severity: 'warn', maxLossLu: 3 },
  ],
};
const profile = parseProfile(profileJson);

const check = (report: QcReport, id: string) => report.checks.find((c) => c.ruleId === id);

/** 997 Hz, 6 s, peaks per channel in dBFS (L R C LFE Ls Rs, or L R). */
const tone = (peakDbfs: (number | null)[], phaseDegrees?: number[]): ToneSegment[] => [
  { seconds: 6, frequencyHz: 997, peakDbfs, ...(phaseDegrees ? { phaseDegrees } : {}) },
];

describe('fold-down rules', () => {
  it('turns the readings on only for a profile with a fold-down rule or setting', () => {
    expect(analysisOptionsForProfile(profile).downmix).toEqual({ enabled: true });
    const plain = parseProfile({
      ...profileJson,
      rules: [{ id: 'tp', type: 'true-peak', severity: 'fail', maxDbtp: -1 }],
    });
    expect(analysisOptionsForProfile(plain).downmix).toBeUndefined();
    const gains = parseProfile({ ...profileJson, downmix: { centreGainDb: 0, lfeGainDb: -10, channelLoudness: true } });
    expect(analysisOptionsForProfile(gains).downmix).toEqual({
      enabled: true,
      centreGainDb: 0,
      lfeGainDb: -10,
      channelLoudness: true,
    });
  });

  it('5.1 with a -20 dBFS sine only in C: Lo/Ro read -23.01 LUFS (C at 0.707 into each side, ITU-R BS.775)', async () => {
    const path = await writeTone(dir, { channels: 6, segments: tone([null, null, -20, null, null, null]) });
    const report = await checkFile(path, profile);
    // Two channels at -23.01 dBFS peak: 10 log10(2 * 10^(-2.301) / 2) = -23.01 LKFS (ITU-R BS.1770-5 eq. (2)).
    expect(report.downmix.loRo!.integratedLufs).toBeCloseTo(-23.01, 1);
    expect(check(report, 'dm-loudness')).toMatchObject({ outcome: 'pass', passed: true });
    expect(check(report, 'dm-peak')).toMatchObject({ outcome: 'pass', passed: true });
    expect(check(report, 'dm-clip')).toMatchObject({ outcome: 'pass', measured: 0 });
    // Stereo-only rule on 5.1: not applied.
    expect(check(report, 'mono')).toMatchObject({ outcome: 'not_measurable', passed: true });
    expect(report.verdict).toBe('pass');
  });

  it('5.1 with L and C at -1 dBFS in phase: Lo peaks at 1.52 (+3.6 dB), over the ceiling and clipped, flagged with timecode', async () => {
    const path = await writeTone(dir, { channels: 6, segments: tone([-1, null, -1, null, null, null]) });
    const report = await checkFile(path, profile);
    const lo = 10 ** (-1 / 20) * (1 + Math.SQRT1_2);
    expect(report.downmix.loRo!.truePeakDbtp).toBeGreaterThanOrEqual(20 * Math.log10(lo) - 0.1);
    expect(check(report, 'dm-peak')).toMatchObject({ outcome: 'fail', passed: false });
    expect(check(report, 'dm-clip')).toMatchObject({ outcome: 'fail', passed: false });
    // Two lobes per cycle over full scale: 997 Hz for 6 s gives about 11964 runs (closed form).
    expect(Math.abs(report.downmix.loRo!.clipRuns - 2 * 997 * 6)).toBeLessThanOrEqual(4);
    const flag = report.flags.find((f) => f.kind === 'downmix_clipping');
    expect(flag).toMatchObject({ ruleId: 'dm-clip', severity: 'fail', channel: null, title: 'Downmix clipping' });
    expect(flag!.startTimecode).toMatch(/^\d\d:\d\d:\d\d:\d\d$/);
    expect(report.verdict).toBe('fail');
  });

  it('stereo with R inverted: the mono sum cancels and the mono rule fails; the Lo/Ro rules are not applied', async () => {
    const path = await writeTone(dir, { segments: tone([-20, -20], [0, 180]) });
    const report = await checkFile(path, profile);
    expect(report.downmix.mono).toMatchObject({ integratedLufs: null, compatibilityLossLu: null, cancels: true });
    expect(check(report, 'mono')).toMatchObject({ outcome: 'fail', passed: false, severity: 'warn' });
    expect(check(report, 'dm-loudness')).toMatchObject({ outcome: 'not_measurable', passed: true });
    expect(report.verdict).toBe('warn');
  });

  it('stereo in phase: the mono sum is 3.01 LU louder (loss -3.01), and 90 degrees apart loses nothing', async () => {
    const same = await checkFile(await writeTone(dir, { segments: tone([-20, -20]) }), profile);
    expect(same.downmix.mono!.compatibilityLossLu).toBeCloseTo(-3.01, 2);
    expect(check(same, 'mono')).toMatchObject({ outcome: 'pass' });
    const quadrature = await checkFile(await writeTone(dir, { segments: tone([-20, -20], [0, 90]) }), profile);
    expect(quadrature.downmix.mono!.compatibilityLossLu).toBeCloseTo(0, 2);
  });

  it('refuses a document analysed without the readings or with other gains', async () => {
    const path = await writeTone(dir, { channels: 6, segments: tone([null, null, -20, null, null, null]) });
    const bare = await analyzeFile(path, { hash: false });
    expect(() => evaluate(profile, bare)).toThrow(/did not measure the downmix/);
    const other = await analyzeFile(path, { hash: false, analysis: { downmix: { enabled: true, centreGainDb: 0 } } });
    expect(() => evaluate(profile, other)).toThrow(/other downmix gains/);
  });
});
