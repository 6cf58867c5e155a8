// Every number the CLI prints as text carries its unit, or is a count with its noun beside it
// (the checker and its documented allowlist: test/helpers/units.ts).

import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.ts';
import { formatSelftestLine } from '../../src/cli/selftest.ts';
import { complianceCases, runComplianceCase } from '../../src/selftest/cases.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { compose, RATE, seconds } from '../helpers/head-signals.ts';
import { TABLE_HEADER, unitless } from '../helpers/units.ts';
import { setRange, tempDir, writeTone } from '../profiles/helpers.ts';
import { captureMerged } from '../helpers/cli-io.ts';

async function run(...argv: string[]): Promise<string> {
  const io = captureMerged();
  await main(argv, io);
  return io.out;
}

const { dir, cleanup } = tempDir();
let defective = '';
let clean = '';
let cut = '';
let head = '';
let headProfile = '';
beforeAll(async () => {
  // A loud tone with a clip run, a drop-out and a silent gap: events, flags and fold-down lines all print.
  defective = await writeTone(dir, {
    segments: [
      { seconds: 4, peakDbfs: -8 },
      { seconds: 3, peakDbfs: null },
      { seconds: 4, peakDbfs: -8 },
    ],
    edit: (data, start) => {
      setRange(48000, 48010, 1)(data, start);
      setRange(96000, 96100, 0, [0])(data, start);
    },
  });
  clean = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -23 }] });
  // The same file cut short: its header declares more audio than it holds (damaged-file lines).
  cut = join(dir, 'cut.wav');
  const bytes = readFileSync(clean);
  writeFileSync(cut, bytes.subarray(0, Math.floor(bytes.length * 0.6)));
  // A head: 3 s of 1 kHz line-up tone at -18 dBFS, 3 s of silence, 3 s of programme; a profile that judges it.
  head = join(dir, 'head.wav');
  const tone = { kind: 'sine', startFrame: 0, frames: seconds(3), hz: 1000, levelDbfs: -18 } as const;
  const programme = { kind: 'programme', startFrame: seconds(6), frames: seconds(3) } as const;
  await writeWavFile(head, { sampleRate: RATE, channels: 2, bitsPerSample: 24, float: false }, [
    compose(
      2,
      seconds(10),
      [0, 1].flatMap((channel) => [
        { ...tone, channel },
        { ...programme, channel },
      ]),
    ),
  ]);
  headProfile = join(dir, 'head.json');
  writeFileSync(
    headProfile,
    JSON.stringify({
      id: 'head-units',
      name: 'Head units',
      version: '1.0.0',
      description: 'line-up tone judged',
      basis: 'house rule',
      rules: [{ id: 'tone', type: 'line-up-tone', severity: 'warn', frequencyHz: 1000, levelDbfs: -18, minSeconds: 2 }],
    }),
  );
});
afterAll(cleanup);

describe('units on every printed value', () => {
  it('the checker finds a bare number and passes the allowlisted forms', () => {
    expect(unitless('  Integrated loudness   -23.0')).toHaveLength(1);
    expect(unitless('  Integrated loudness   -23.0 LUFS, 5 of 6 checks met, clipping 2, 24-bit')).toEqual([]);
    expect(unitless('tone at 00:00:01:00 (EBU R 128, Tech 3341 case 3341-10.2), -24 to -22 LUFS ±1 LU')).toEqual([]);
    expect(unitless('worst 0.98')).toHaveLength(1);
  });

  it('analyze: every line', async () => {
    for (const file of [defective, clean, cut]) {
      const text = await run('analyze', file, '--downmix', '--channel-loudness', '--all');
      expect(text).toContain('Events:');
      expect(text.split('\n').filter((l) => TABLE_HEADER.test(l))).toHaveLength(1);
      expect(unitless(text), text).toEqual([]);
    }
  });

  it('check: every line, for several profiles', async () => {
    for (const profile of ['ebu-r128', 'delivery-broadcast-stereo', 'podcast', 'streaming-aes'])
      for (const file of [defective, clean, cut]) {
        const text = await run('check', file, '--profile', profile, '--all');
        expect(unitless(text), text).toEqual([]);
      }
    const text = await run('check', head, '--profile', headProfile, '--all');
    expect(text).toMatch(/^head {5}tone /m);
    expect(unitless(text), text).toEqual([]);
  });

  it('profiles and selftest lines', async () => {
    const profiles = await run('profiles');
    expect(unitless(profiles), profiles).toEqual([]);
    // One case of each reading (running all 101 takes a while; the line format is the same).
    const seen = new Set<string>();
    const lines = complianceCases()
      .filter((c) => !seen.has(c.reading) && seen.add(c.reading))
      .map((c) => formatSelftestLine(runComplianceCase(c)));
    expect(lines.length).toBeGreaterThanOrEqual(7);
    const descriptions = complianceCases()
      .map((c) => c.description)
      .join('\n');
    expect(unitless(lines.join('\n')), lines.join('\n')).toEqual([]);
    expect(unitless(descriptions)).toEqual([]);
  });
});
