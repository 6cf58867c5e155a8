// `earmark check` and `earmark profiles` through main() with captured output: exit codes
// 0 pass, 1 warn, 2 fail, 3 error; the --json report is a superset of `analyze --json`.

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.ts';
import type { QcReport } from '../../src/profiles/index.ts';
import { tempDir, writeTone } from '../profiles/helpers.ts';
import { capture } from '../helpers/cli-io.ts';

const { dir, cleanup } = tempDir();
let onTarget = '';
let loud = '';
let mono = '';
beforeAll(async () => {
  onTarget = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -23 }] }); // EBU Tech 3341 case 1: reads -23.0 LUFS
  loud = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -20.4 }] });
  mono = await writeTone(dir, { channels: 1, segments: [{ seconds: 6, peakDbfs: -13 }] });
});
afterAll(cleanup);

describe('earmark check', () => {
  it('exit 0 on pass, with a readable verdict', async () => {
    const io = capture();
    expect(await main(['check', onTarget, '--profile', 'ebu-r128'], io)).toBe(0);
    expect(io.out).toContain('verdict  PASS');
  });

  it('exit 2 on fail, naming the failed check with its explanation', async () => {
    const io = capture();
    expect(await main(['check', loud, '--profile', 'ebu-r128'], io)).toBe(2);
    expect(io.out).toContain(
      'programme-loudness: Integrated loudness -20.4 LUFS is 2.6 LU above the -23 LUFS target, 1.6 LU above the upper limit -22 LUFS (tolerance ±1.0 LU)',
    );
    expect(io.out).toMatch(/gain +-2\.6\d dB to -23 LUFS/);
  });

  it('exit 1 on warn (podcast, common practice: mono is a warning)', async () => {
    const io = capture();
    expect(await main(['check', mono, '--profile', 'podcast'], io)).toBe(1);
    expect(io.out).toContain('verdict  WARN');
  });

  it('--json prints the report: analysis fields plus verdict, checks, flags, provenance', async () => {
    const io = capture();
    expect(await main(['check', loud, '--profile', 'ebu-r128', '--json', '--fps', '29.97-df'], io)).toBe(2);
    const report = JSON.parse(io.out) as QcReport;
    const analysis = capture();
    await main(['analyze', loud, '--json'], analysis);
    for (const key of Object.keys(JSON.parse(analysis.out))) expect(report).toHaveProperty(key);
    expect(report.verdict).toBe('fail');
    expect(report.profile).toEqual({
      id: 'ebu-r128',
      version: '1.0.0',
      name: 'EBU R 128 programme',
      basis: 'EBU R 128 V5 (2023) items h and m',
    });
    expect(report.file?.sha256).toMatch(/^[0-9a-f]{64}$/);
    expect(report.engine.version).toBeTruthy();
    expect(report.timecode.frameRate).toBe('29.97-df');
    expect(Date.parse(report.generatedAt)).not.toBeNaN();
  });

  it('a house profile file works; a bad one is exit 3 naming the field', async () => {
    const good = join(dir, 'house.json');
    writeFileSync(
      good,
      JSON.stringify({
        id: 'house',
        name: 'House',
        version: '0.1.0',
        description: '',
        basis: 'house rule',
        rules: [{ id: 'tp', type: 'true-peak', severity: 'warn', maxDbtp: -30 }],
      }),
    );
    const io = capture();
    expect(await main(['check', onTarget, '--profile', good], io)).toBe(1);
    const bad = join(dir, 'bad.json');
    writeFileSync(
      bad,
      JSON.stringify({
        id: 'house',
        name: 'House',
        version: '0.1.0',
        description: '',
        basis: 'house rule',
        rules: [{ id: 'tp', type: 'true-peak', severity: 'warn', maxDbtp: 'low' }],
      }),
    );
    const err = capture();
    expect(await main(['check', onTarget, '--profile', bad], err)).toBe(3);
    expect(err.err).toMatch(/^error invalid_profile: .*rules\[0\]\.maxDbtp/);
  });

  it('exit 3 for an unknown profile id, a missing --profile, a bad --fps and a missing file', async () => {
    const cases: Array<[string[], string]> = [
      [['check', onTarget, '--profile', 'ebu-r999'], 'unknown_profile'],
      [['check', onTarget], 'invalid_argument'],
      [['check', onTarget, '--profile', 'ebu-r128', '--fps', '29.97'], 'invalid_argument'],
      [['check', join(dir, 'nope.wav'), '--profile', 'ebu-r128'], 'file_not_found'],
    ];
    for (const [argv, code] of cases) {
      const io = capture();
      expect(await main(argv, io), argv.join(' ')).toBe(3);
      expect(io.err).toContain(`error ${code}:`);
    }
  });
});

describe('earmark profiles', () => {
  it('lists the built-ins and prints one as JSON to copy', async () => {
    const io = capture();
    expect(await main(['profiles'], io)).toBe(0);
    for (const id of ['ebu-r128', 'ebu-r128-short-form', 'atsc-a85', 'streaming-aes', 'podcast'])
      expect(io.out).toContain(id);
    const one = capture();
    expect(await main(['profiles', 'atsc-a85'], one)).toBe(0);
    expect(JSON.parse(one.out).timecode).toEqual({ frameRate: '29.97-df' });
  });
});
