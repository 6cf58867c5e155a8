// `earmark package` through main() with captured output: text with units, --json, exit codes by
// the package verdict (0 pass, 1 warn, 2 fail, 3 error).

import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.ts';
import type { PackageReport } from '../../src/packages/check-package.ts';
import { writeStemSet } from '../helpers/stem-files.ts';
import { capture } from '../helpers/cli-io.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-package-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// A house profile the generated sines meet (their true peak is under 0 dBTP), so the set checks decide.
const profile = join(dir, 'house.json');
let good: { stems: string[]; mix: string };
let muted: { stems: string[]; mix: string };
let short: { stems: string[]; mix: string };
const RATE = 48_000;

beforeAll(async () => {
  writeFileSync(
    profile,
    JSON.stringify({
      id: 'house-stems',
      name: 'House stems',
      version: '1.0.0',
      description: 'Test profile: only a true-peak ceiling.',
      basis: 'house rule',
      rules: [{ id: 'peak', type: 'true-peak', severity: 'fail', maxDbtp: 0, source: 'house rule' }],
    }),
  );
  good = await writeStemSet({ dir, seconds: 3, prefix: 'good-' });
  muted = await writeStemSet({
    dir,
    seconds: 3,
    prefix: 'muted-',
    mute: { stem: 0, startFrame: 1.25 * RATE, endFrame: 1.75 * RATE },
  });
  short = await writeStemSet({ dir, seconds: 3, prefix: 'short-', shorten: { stem: 1, frames: 1 } });
});

const stemArgs = (set: { stems: string[]; mix: string }) => [
  '--mix',
  set.mix,
  ...set.stems.flatMap((s) => ['--stem', s]),
];

describe('earmark package', () => {
  it('exit 0 when the stems null and every file meets the profile; levels printed with units', async () => {
    const io = capture();
    expect(await main(['package', '--profile', profile, ...stemArgs(good)], io)).toBe(0);
    expect(io.out).toMatch(/^PASS: 4 files agree/);
    expect(io.out).toContain('48000 Hz, 32-bit float, 2 ch, 144000 samples (3.000 s)');
    expect(io.out).toMatch(/residual \(stems - mix\) -1[45]\d\.\d dB relative to the mix/);
    expect(io.out).toContain('tolerance -60 dB');
    expect(io.out).toContain('verdict  PASS');
  });

  it('exit 2 with the span where a muted stem breaks the sum, in timecode and seconds', async () => {
    const io = capture();
    expect(await main(['package', '--profile', profile, ...stemArgs(muted)], io)).toBe(2);
    expect(io.out).toMatch(/^FAIL: the stems do not sum to the mix \(residual -\d+\.\d dB relative to the mix/);
    // 0.1 s windows: the mute 1.25 - 1.75 s lies in the windows 1.2 - 1.8 s; 1.2 s at 25 fps is frame 5.
    expect(io.out).toContain('over   00:00:01:05 - 00:00:01:20  (1.200 s - 1.800 s)');
    expect(io.out).toContain('FAIL  stems_sum_to_mix');
  });

  it('--json carries the members, the set checks and the spans; a short stem fails the length check', async () => {
    const io = capture();
    expect(await main(['package', '--profile', profile, ...stemArgs(short), '--json'], io)).toBe(2);
    const report = JSON.parse(io.out) as PackageReport;
    expect(report.verdict).toBe('fail');
    expect(report.members.map((m) => m.role)).toEqual(['mix', 'stem', 'stem', 'stem']);
    expect(report.members.every((m) => m.verdict === 'pass')).toBe(true);
    const length = report.set.checks.find((c) => c.id === 'same_length');
    expect(length?.passed).toBe(false);
    expect(length?.explanation).toContain('143999 samples');
    expect(report.headline).toContain('lengths differ');
  });

  it('--stem-profile judges the stems by their own profile; the headline names the files that fail', async () => {
    const io = capture();
    const args = ['package', '--profile', profile, '--stem-profile', 'ebu-r128', ...stemArgs(good)];
    expect(await main(args, io)).toBe(2);
    expect(io.out).toContain('stems    ebu-r128 1.0.0');
    // The stems (220 Hz, 1 kHz, 3 kHz sines) read -14.9, -20.0 and -22.9 LUFS in this run: under
    // EBU R 128's -23 +/-1 LUFS (R 128 item h) only the last passes; the mix is judged by the house profile.
    expect(io.out).toMatch(/^FAIL: \S*good-stem-1\.wav fails: Integrated loudness/);
    expect(io.out).not.toContain('FAIL: FAIL');
    expect(io.out).toMatch(/mix {5}PASS/);
  });

  it('versions alone are compared on rate, depth and length', async () => {
    const io = capture();
    expect(await main(['package', '--profile', profile, '--version', good.mix, '--version', muted.mix], io)).toBe(0);
    expect(io.out).toContain('same_length: all 2 files: 144000 samples');
    expect(io.out).not.toContain('residual');
  });

  it('--tolerance takes a negative number after a space; bad shapes and values exit 3', async () => {
    const io = capture();
    expect(await main(['package', '--profile', profile, ...stemArgs(good), '--tolerance', '-160'], io)).toBe(2);
    expect(io.out).toContain('tolerance -160 dB');
    const errors: string[][] = [
      ['package', '--profile', profile, '--stem', good.stems[0], '--stem', good.stems[1]],
      ['package', '--profile', profile, '--mix', good.mix],
      ['package', ...stemArgs(good)],
      ['package', '--profile', profile, ...stemArgs(good), '--tolerance', '6'],
      ['package', '--profile', profile, good.mix, good.stems[0]],
    ];
    for (const args of errors) {
      const bad = capture();
      expect(await main(args, bad)).toBe(3);
      expect(bad.err).toMatch(/^error invalid_argument: /);
    }
  });
});
