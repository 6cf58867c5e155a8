// Integrated loudness just past the edge of its tolerance: the explanation shows enough decimals
// that the value never reads as on the edge it is past, and says how far past it is. The
// judgement is unchanged: EBU R 128 V5 (2023) item h's ±1.0 LU (and item i's ±0.2 LU measurement
// tolerance) apply to the measured value as it is, unrounded (common practice).

import { afterAll, describe, expect, it } from 'vitest';
import { runCheck } from '../../src/profiles/checks.ts';
import { builtinProfile, type Rule } from '../../src/profiles/index.ts';
import { BUSY_CHANNELS } from '../views/busy-report.ts';
import { sampleReport } from '../views/sample-report.ts';
import { checkFile, checkOf, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

function loudnessRule(profileId: string): Rule {
  const rule = builtinProfile(profileId).rules.find((r) => r.id === 'programme-loudness');
  if (!rule) throw new Error(`${profileId} has no programme-loudness rule`);
  return rule;
}

/** The programme-loudness check of a document whose integrated loudness is `lufs`. */
function judged(profileId: string, lufs: number) {
  const doc = sampleReport();
  return runCheck(loudnessRule(profileId), { ...doc, summary: { ...doc.summary, integratedLufs: lufs } });
}

describe('integrated loudness at the edge of -23 ±1 LU (EBU R 128 item h)', () => {
  it('-21.96 LUFS fails and reads -21.96, 0.04 LU above the upper limit -22 LUFS (not "-22.0")', () => {
    expect(judged('ebu-r128', -21.96)).toMatchObject({
      outcome: 'fail',
      passed: false,
      measured: -21.96,
      explanation:
        'Integrated loudness -21.96 LUFS is 1.04 LU above the -23 LUFS target, 0.04 LU above the upper limit -22 LUFS (tolerance ±1.0 LU)',
    });
  });

  it('-24.03 LUFS fails, 0.03 LU below the lower limit -24 LUFS', () => {
    expect(judged('ebu-r128', -24.03).explanation).toBe(
      'Integrated loudness -24.03 LUFS is 1.03 LU below the -23 LUFS target, 0.03 LU below the lower limit -24 LUFS (tolerance ±1.0 LU)',
    );
  });

  it('-22.04 LUFS and exactly -22 LUFS pass (the edge is inside the tolerance)', () => {
    expect(judged('ebu-r128', -22.04)).toMatchObject({
      passed: true,
      explanation: 'Integrated loudness -22.04 LUFS is 0.96 LU above the -23 LUFS target (tolerance ±1.0 LU)',
    });
    expect(judged('ebu-r128', -22)).toMatchObject({
      passed: true,
      explanation: 'Integrated loudness -22.0 LUFS is 1.0 LU above the -23 LUFS target (tolerance ±1.0 LU)',
    });
  });

  it('a hair past the edge still reads past it', () => {
    const check = judged('ebu-r128', -21.9999996);
    expect(check.passed).toBe(false);
    expect(check.explanation).toBe(
      'Integrated loudness -21.9999996 LUFS is 1.0000004 LU above the -23 LUFS target, 0.0000004 LU above the upper limit -22 LUFS (tolerance ±1.0 LU)',
    );
  });

  it('with the ±0.2 LU measurement tolerance (R 128 item i): the value reads against both edges', () => {
    expect(judged('delivery-broadcast-stereo', -21.81)).toMatchObject({
      outcome: 'marginal',
      severity: 'warn',
      explanation:
        'Integrated loudness -21.81 LUFS is 1.19 LU above the -23 LUFS target, 0.19 LU above the upper limit -22 LUFS (tolerance ±1.0 LU, measurement tolerance ±0.2 LU): outside the tolerance but inside the measurement tolerance, so a warning',
    });
    expect(judged('delivery-broadcast-stereo', -21.79)).toMatchObject({
      outcome: 'fail',
      explanation:
        'Integrated loudness -21.79 LUFS is 1.21 LU above the -23 LUFS target, 0.21 LU above the upper limit -22 LUFS (tolerance ±1.0 LU, measurement tolerance ±0.2 LU)',
    });
  });

  it('a 1 kHz stereo tone at -21.96 dBFS peak (EBU Tech 3341 case 1 style: reads about -21.96 LUFS) fails, shown past -22', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -21.96 }] });
    const report = await checkFile(path, builtinProfile('ebu-r128'));
    const check = checkOf(report, 'programme-loudness');
    expect(check.measured).toBeGreaterThan(-22);
    expect(report.verdict).toBe('fail');
    expect(check.explanation).toMatch(
      /^Integrated loudness -21\.9\d+ LUFS is 1\.0\d+ LU above the -23 LUFS target, 0\.0\d+ LU above the upper limit -22 LUFS/,
    );
    expect(report.headline).not.toContain('-22.0 LUFS');
  });
});

describe('line-up tone and its separation just past their limits', () => {
  /** The sample report with both tone segments read as given. */
  function withTone(frequencyHz: number, rmsAes17Db: number, endSeconds: number, toneGapSeconds = 3) {
    const doc = sampleReport();
    const head = {
      ...doc.head,
      toneGapSeconds,
      toneSegments: doc.head.toneSegments.map((s) => ({ ...s, frequencyHz, rmsAes17Db, endSeconds })),
    };
    return { ...doc, channels: BUSY_CHANNELS, head };
  }
  const tone: Rule = {
    id: 'tone',
    type: 'line-up-tone',
    severity: 'fail',
    frequencyHz: 1000,
    frequencyToleranceHz: 1,
    levelDbfs: -18,
    levelToleranceDb: 0.5,
    minSeconds: 1,
  };

  it('a reading past its edge shows enough decimals to read past it (not "1001.0 Hz, not 1000 +/- 1 Hz")', () => {
    const check = runCheck(tone, withTone(1001.04, -17.496, 0.9996));
    expect(check.passed).toBe(false);
    expect(check.explanation).toContain('the longest tone lasts 0.9996 s, under the 1 s minimum');
    expect(check.explanation).toContain('1001.04 Hz, not 1000 +/- 1 Hz');
    expect(check.explanation).toContain('-17.496 dBFS, not -18 +/- 0.5 dB');
  });

  it('a tone-to-programme gap a hair under the minimum reads under it', () => {
    const rule: Rule = { id: 'gap', type: 'tone-separation', severity: 'fail', minGapSeconds: 2 };
    const check = runCheck(rule, withTone(1000, -18, 1, 1.9996));
    expect(check.passed).toBe(false);
    expect(check.explanation).toMatch(/^Only 1\.9996 s between the line-up tone and the programme/);
  });
});
