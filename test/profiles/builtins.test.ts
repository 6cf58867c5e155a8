// Every built-in limit, just inside and just outside, on generated stereo 1 kHz tones. A stereo
// 1 kHz sine at P dBFS peak reads P LUFS (EBU Tech 3341 V4 Table 1 case 1) and about P dBTP,
// so one tone level probes one limit; only the rule under test is asserted.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { BUILTIN_PROFILES, builtinProfile } from '../../src/profiles/index.ts';
import { checkFile, checkOf, tempDir, writeTone } from './helpers.ts';

interface Case {
  profile: string;
  rule: string;
  peakDbfs: number;
  passes: boolean;
  source: string;
}

// Margins: 0.15 LU for loudness, 0.1 dB for true peak (the meter reads a tone within 0.01 of its level).
const cases: Case[] = [
  // EBU R 128 V5 (2023) item h: -23.0 LUFS, +/-1.0 LU where exact normalisation is not achievable.
  {
    profile: 'ebu-r128',
    rule: 'programme-loudness',
    peakDbfs: -22.15,
    passes: true,
    source: 'EBU R 128 V5 (2023) item h',
  },
  {
    profile: 'ebu-r128',
    rule: 'programme-loudness',
    peakDbfs: -21.85,
    passes: false,
    source: 'EBU R 128 V5 (2023) item h',
  },
  {
    profile: 'ebu-r128',
    rule: 'programme-loudness',
    peakDbfs: -23.85,
    passes: true,
    source: 'EBU R 128 V5 (2023) item h',
  },
  {
    profile: 'ebu-r128',
    rule: 'programme-loudness',
    peakDbfs: -24.15,
    passes: false,
    source: 'EBU R 128 V5 (2023) item h',
  },
  // EBU R 128 V5 (2023) item m: max true peak -1 dBTP.
  { profile: 'ebu-r128', rule: 'true-peak', peakDbfs: -1.1, passes: true, source: 'EBU R 128 V5 (2023) item m' },
  { profile: 'ebu-r128', rule: 'true-peak', peakDbfs: -0.9, passes: false, source: 'EBU R 128 V5 (2023) item m' },
  // EBU Tech 3343 9.1 (short-form): -23.0 LUFS, -1 dBTP, max short-term -18.0 LUFS.
  {
    profile: 'ebu-r128-short-form',
    rule: 'programme-loudness',
    peakDbfs: -22.15,
    passes: true,
    source: 'EBU Tech 3343 9.1, R 128 item h',
  },
  {
    profile: 'ebu-r128-short-form',
    rule: 'programme-loudness',
    peakDbfs: -24.15,
    passes: false,
    source: 'EBU Tech 3343 9.1, R 128 item h',
  },
  { profile: 'ebu-r128-short-form', rule: 'true-peak', peakDbfs: -1.1, passes: true, source: 'EBU Tech 3343 9.1' },
  { profile: 'ebu-r128-short-form', rule: 'true-peak', peakDbfs: -0.9, passes: false, source: 'EBU Tech 3343 9.1' },
  {
    profile: 'ebu-r128-short-form',
    rule: 'short-term-max',
    peakDbfs: -18.15,
    passes: true,
    source: 'EBU Tech 3343 9.1',
  },
  {
    profile: 'ebu-r128-short-form',
    rule: 'short-term-max',
    peakDbfs: -17.85,
    passes: false,
    source: 'EBU Tech 3343 9.1',
  },
  // ATSC A/85:2013: -24 LKFS +/-2 dB (secondary copy); -2 dBTP (from memory, unverified).
  {
    profile: 'atsc-a85',
    rule: 'programme-loudness',
    peakDbfs: -22.15,
    passes: true,
    source: 'ATSC A/85:2013 (secondary)',
  },
  {
    profile: 'atsc-a85',
    rule: 'programme-loudness',
    peakDbfs: -21.85,
    passes: false,
    source: 'ATSC A/85:2013 (secondary)',
  },
  {
    profile: 'atsc-a85',
    rule: 'programme-loudness',
    peakDbfs: -25.85,
    passes: true,
    source: 'ATSC A/85:2013 (secondary)',
  },
  {
    profile: 'atsc-a85',
    rule: 'programme-loudness',
    peakDbfs: -26.15,
    passes: false,
    source: 'ATSC A/85:2013 (secondary)',
  },
  { profile: 'atsc-a85', rule: 'true-peak', peakDbfs: -2.1, passes: true, source: 'ATSC A/85:2013 (from memory)' },
  { profile: 'atsc-a85', rule: 'true-peak', peakDbfs: -1.9, passes: false, source: 'ATSC A/85:2013 (from memory)' },
  // AES TD1004.1.15-10: between -20 and -16 LUFS, true peak <= -1.0 dBTP (secondary quotations).
  {
    profile: 'streaming-aes',
    rule: 'programme-loudness',
    peakDbfs: -16.15,
    passes: true,
    source: 'AES TD1004.1.15-10 (secondary)',
  },
  {
    profile: 'streaming-aes',
    rule: 'programme-loudness',
    peakDbfs: -15.85,
    passes: false,
    source: 'AES TD1004.1.15-10 (secondary)',
  },
  {
    profile: 'streaming-aes',
    rule: 'programme-loudness',
    peakDbfs: -19.85,
    passes: true,
    source: 'AES TD1004.1.15-10 (secondary)',
  },
  {
    profile: 'streaming-aes',
    rule: 'programme-loudness',
    peakDbfs: -20.15,
    passes: false,
    source: 'AES TD1004.1.15-10 (secondary)',
  },
  {
    profile: 'streaming-aes',
    rule: 'true-peak',
    peakDbfs: -1.1,
    passes: true,
    source: 'AES TD1004.1.15-10 (secondary)',
  },
  {
    profile: 'streaming-aes',
    rule: 'true-peak',
    peakDbfs: -0.9,
    passes: false,
    source: 'AES TD1004.1.15-10 (secondary)',
  },
  // AES TD1008 Table 1 (secondary): no measurable dialogue (a tone holds no speech), so the
  // programme anchor: -18 LUFS within 2 LU (applied both ways, our reading); true peak -1 dBTP.
  ...[
    { peakDbfs: -16.15, passes: true },
    { peakDbfs: -15.85, passes: false },
    { peakDbfs: -19.85, passes: true },
    { peakDbfs: -20.15, passes: false },
  ].map((c) => ({
    ...c,
    profile: 'streaming-dialogue-anchored',
    rule: 'anchor-loudness',
    source: 'AES TD1008 (secondary)',
  })),
  ...[
    { peakDbfs: -1.1, passes: true },
    { peakDbfs: -0.9, passes: false },
  ].map((c) => ({ ...c, profile: 'streaming-dialogue-anchored', rule: 'true-peak', source: 'AES TD1008 (secondary)' })),
  // Podcast: common practice, -16 LUFS stereo +/-1 LU, -1 dBTP.
  { profile: 'podcast', rule: 'programme-loudness', peakDbfs: -15.15, passes: true, source: 'common practice' },
  { profile: 'podcast', rule: 'programme-loudness', peakDbfs: -14.85, passes: false, source: 'common practice' },
  { profile: 'podcast', rule: 'programme-loudness', peakDbfs: -16.85, passes: true, source: 'common practice' },
  { profile: 'podcast', rule: 'programme-loudness', peakDbfs: -17.15, passes: false, source: 'common practice' },
  { profile: 'podcast', rule: 'true-peak', peakDbfs: -1.1, passes: true, source: 'common practice' },
  { profile: 'podcast', rule: 'true-peak', peakDbfs: -0.9, passes: false, source: 'common practice' },
];

const { dir, cleanup } = tempDir();
const files = new Map<number, string>();
beforeAll(async () => {
  for (const level of new Set(cases.map((c) => c.peakDbfs)))
    files.set(level, await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: level }] }));
});
afterAll(cleanup);

describe('built-in profiles', () => {
  it.each(cases)('$profile $rule at $peakDbfs dBFS -> passes=$passes ($source)', async (c) => {
    const report = await checkFile(files.get(c.peakDbfs) as string, builtinProfile(c.profile));
    const check = checkOf(report, c.rule);
    expect(check.passed, check.explanation).toBe(c.passes);
    expect(check.outcome).toBe(c.passes ? 'pass' : 'fail');
  });

  it('covers every standard-only built-in with its loudness and true-peak limit (delivery profiles: delivery.test.ts)', () => {
    for (const p of BUILTIN_PROFILES.filter((x) => !x.id.startsWith('delivery-'))) {
      for (const r of p.rules.filter((x) => x.type !== 'channels' && x.type !== 'clipping')) {
        expect(
          cases.some((c) => c.profile === p.id && c.rule === r.id),
          `${p.id} ${r.id}`,
        ).toBe(true);
      }
    }
  });

  it('sets the regional frame rate: 25 fps in Europe, 29.97 drop-frame for ATSC', () => {
    expect(builtinProfile('ebu-r128').timecode?.frameRate).toBe('25');
    expect(builtinProfile('ebu-r128-short-form').timecode?.frameRate).toBe('25');
    expect(builtinProfile('atsc-a85').timecode?.frameRate).toBe('29.97-df');
  });

  it('explains an integrated-loudness failure in one line', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -20.4 }] });
    const check = checkOf(await checkFile(path, builtinProfile('ebu-r128')), 'programme-loudness');
    expect(check.explanation).toBe(
      'Integrated loudness -20.4 LUFS is 2.6 LU above the -23 LUFS target, 1.6 LU above the upper limit -22 LUFS (tolerance ±1.0 LU)',
    );
  });

  it('podcast warns on mono and on clipping, both common practice', async () => {
    const path = await writeTone(dir, { channels: 1, segments: [{ seconds: 6, peakDbfs: -13 }] });
    const report = await checkFile(path, builtinProfile('podcast'));
    expect(checkOf(report, 'stereo').passed).toBe(false);
    expect(checkOf(report, 'programme-loudness').passed).toBe(true); // mono 1 kHz at -13 dBFS reads about -16 LUFS (BS.1770-5: -3.01 for one channel)
    expect(report.verdict).toBe('warn');
  });
});
