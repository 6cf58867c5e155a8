// Integrity is part of every verdict: a cut, empty, too-short or non-finite file fails under
// every profile, built-in or custom, with a flag where the audio stops and the reason first.

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { formatReport } from '../../src/cli/check.ts';
import { wavHeader, encodePcmFrames } from '../../src/encode/wav.ts';
import { BUILTIN_PROFILES, builtinProfile, parseProfile, type Profile } from '../../src/profiles/index.ts';
import { writeDefectFile } from '../helpers/defect-files.ts';
import { checkFile, checkOf, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

const custom = (extra: Profile['rules'] = []): Profile =>
  parseProfile({
    id: 'house-format-only',
    name: 'Format only',
    version: '1.0.0',
    description: 'test',
    basis: 'house rule',
    rules: [{ id: 'rate', type: 'sample-rate', severity: 'fail', allowedHz: [48000] }, ...extra],
  });

/** A WAV whose header declares `declaredFrames` but whose data chunk holds `frames` (16-bit stereo). */
function rawWav(name: string, frames: number, declaredFrames = frames): string {
  const header = wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: 16, float: false, frames: declaredFrames });
  const data = encodePcmFrames([new Float32Array(frames).fill(0.25), new Float32Array(frames).fill(-0.25)], 16, false);
  const path = join(dir, name);
  writeFileSync(path, Buffer.concat([header, data]));
  return path;
}

describe('integrity in every verdict', () => {
  it('a WAV whose second half is missing fails every built-in profile, with a flag at 10 s and the reason first', async () => {
    const file = await writeDefectFile(dir, 'truncated');
    for (const builtin of BUILTIN_PROFILES) {
      const report = await checkFile(file.path, builtin);
      expect(report.verdict, builtin.id).toBe('fail');
      expect(report.integrity.intact).toBe(false);
      expect(report.integrity.problems[0]).toMatchObject({ code: 'data_ends_early', atSample: 480000, atSeconds: 10 });
      expect(report.checks[0]).toMatchObject({ type: 'integrity', passed: false, severity: 'fail' });
      const flag = report.flags.find((f) => f.kind === 'data_ends_early');
      expect(flag).toMatchObject({ severity: 'fail', startSample: 480000, channelName: 'all' });
      // 480000 samples at 48 kHz = 10 s: 00:00:10:00 at 25 fps, 00:00:09;29 at 29.97 drop-frame (299.7 frames; SMPTE ST 12-1).
      expect(report.headline).toMatch(
        builtin.timecode?.frameRate === '29.97-df'
          ? /^FAIL: damaged file at 00:00:09;29/
          : /^FAIL: damaged file at 00:00:10:00/,
      );
      expect(formatReport(report).split('\n')[0]).toBe(report.headline);
    }
  });

  it('a custom profile without loudness rules fails the cut file too; naming the rule as warn lowers it, explicitly', async () => {
    const file = await writeDefectFile(dir, 'truncated');
    const strict = await checkFile(file.path, custom());
    expect(strict.verdict).toBe('fail');
    const lowered = await checkFile(
      file.path,
      custom([
        {
          id: 'file-ok',
          type: 'integrity',
          severity: 'warn',
          source: 'house rule: archive ingest keeps partial files',
        },
      ]),
    );
    expect(lowered.verdict).toBe('warn');
    expect(checkOf(lowered, 'file-ok')).toMatchObject({ passed: false, severity: 'warn' });
    expect(lowered.integrity.severity).toBe('warn');
    expect(lowered.flags.find((f) => f.kind === 'data_ends_early')?.severity).toBe('warn');
  });

  it('an intact file passes the integrity check under a custom profile', async () => {
    const file = await writeDefectFile(dir, 'clean');
    const report = await checkFile(file.path, custom());
    expect(report.verdict).toBe('pass');
    expect(report.checks[0]).toMatchObject({ ruleId: 'integrity', passed: true });
    expect(report.integrity).toMatchObject({ intact: true, problems: [] });
  });

  it('a header and one frame never passes: too short to measure, in plain words', async () => {
    const path = rawWav('one-frame.wav', 1);
    for (const profile of [builtinProfile('ebu-r128'), custom()]) {
      const report = await checkFile(path, profile);
      expect(report.verdict).toBe('fail');
      expect(report.integrity.problems.map((p) => p.code)).toEqual(['too_short']);
      expect(report.headline).toContain('shorter than one 400 ms loudness block');
    }
  });

  it('an empty data chunk is a failing report that says the file holds no audio, not an error', async () => {
    const report = await checkFile(rawWav('empty.wav', 0), builtinProfile('ebu-r128'));
    expect(report.verdict).toBe('fail');
    expect(report.integrity.problems.map((p) => p.code)).toEqual(['no_audio']);
    expect(JSON.stringify(report)).not.toMatch(/Infinity|NaN/);
  });

  it('a declared length the data does not reach is a cut file even without a decoder warning', async () => {
    const report = await checkFile(rawWav('short-data.wav', 48000, 96000), custom());
    expect(report.verdict).toBe('fail');
    expect(report.integrity.problems[0]).toMatchObject({ code: 'data_ends_early', atSample: 48000 });
  });

  it('NaN samples in a float WAV fail every profile with a flag at the first one, and the readings stay finite', async () => {
    const frames = 48000 * 3;
    const x = new Float32Array(frames);
    for (let i = 0; i < frames; i++) x[i] = 0.1 * Math.sin((2 * Math.PI * 997 * i) / 48000);
    x.fill(Number.NaN, 48000, 48010);
    const path = join(dir, 'nan.wav');
    writeFileSync(
      path,
      Buffer.concat([
        wavHeader({ sampleRate: 48000, channels: 1, bitsPerSample: 32, float: true, frames }),
        encodePcmFrames([x], 32, true),
      ]),
    );
    for (const profile of [builtinProfile('ebu-r128'), custom()]) {
      const report = await checkFile(path, profile);
      expect(report.verdict).toBe('fail');
      expect(report.integrity.problems).toMatchObject([{ code: 'non_finite_samples', atSample: 48000 }]);
      expect(report.flags[0]).toMatchObject({
        kind: 'non_finite_samples',
        startSample: 48000,
        endSample: 48000,
        severity: 'fail',
      });
      expect(JSON.stringify(report)).not.toMatch(/-?Infinity"|:NaN/);
    }
  });

  it('digital silence throughout fails R 128 and says so in plain words (BS.1770-5 eq. (6): nothing above -70 LUFS)', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 3, peakDbfs: null }] });
    const report = await checkFile(path, builtinProfile('ebu-r128'));
    expect(report.verdict).toBe('fail');
    expect(report.headline).toBe('FAIL: the file is digital silence throughout');
    expect(checkOf(report, 'programme-loudness').explanation).toContain('digital silence throughout');
    expect(JSON.stringify(report)).not.toMatch(/Infinity|NaN/);
  });

  it('shorter than one 400 ms block: 0.3 s of tone fails with the length in words (BS.1770-5 eq. (3))', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 0.3, peakDbfs: -23 }] });
    const report = await checkFile(path, builtinProfile('ebu-r128'));
    expect(report.verdict).toBe('fail');
    expect(report.integrity.problems[0].message).toContain('0.300 s long');
    expect(report.summary.integratedLufs).toBeNull();
  });
});
