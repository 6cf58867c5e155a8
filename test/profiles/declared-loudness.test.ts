// The declared-loudness rule: what a file's bext v2 / iXML metadata declares against our reading.
// The programme is a stereo 1 kHz sine at -20 dBFS peak, 10 s: EBU Tech 3341 Table 1 case 1 style,
// so integrated, max momentary and max short-term read -20.0 LUFS (+/-0.1 LU), and the loudness
// range of a constant tone is 0 LU (EBU Tech 3342: P95 - P10 of equal values). The sine's true
// peak is its -20 dBFS peak (a 1 kHz sine at 48 kHz: closed form, the samples come within 0.01 dB).
import { afterAll, describe, expect, it } from 'vitest';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { type BextLoudnessFields, writeWavFile } from '../../src/encode/wav.ts';
import {
  analysisOptionsForProfile,
  evaluate,
  parseProfile,
  profileIssues,
  type Rule,
} from '../../src/profiles/index.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';
import { tempDir } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);
let counter = 0;

async function toneWith(metadata: { bextLoudness?: BextLoudnessFields; ixml?: string }, peakDbfs: number | null = -20) {
  const path = `${dir}/declared-${++counter}.wav`;
  const blocks = [...toneBlocks({ sampleRate: 48000, channels: 2, segments: [{ seconds: 10, peakDbfs }] })];
  await writeWavFile(
    path,
    { sampleRate: 48000, channels: 2, bitsPerSample: 24, float: false, ...metadata },
    blocks.map((b) => [...b.channelData]),
  );
  return path;
}

const profileOf = (rules: Rule[]) =>
  parseProfile({
    id: 'test-declared',
    name: 'Declared loudness',
    version: '1.0.0',
    description: 'test',
    basis: 'house rule',
    rules,
  });
const rule = (extra: Partial<Extract<Rule, { type: 'declared-loudness' }>> = {}): Rule => ({
  id: 'declared',
  type: 'declared-loudness',
  severity: 'fail',
  ...extra,
});

/** The declared-loudness check (the integrity check every profile gets comes first). */
const declaredCheck = (report: Awaited<ReturnType<typeof check>>) => {
  const found = report.checks.find((c) => c.ruleId === 'declared');
  if (!found) throw new Error('no declared-loudness check');
  return found;
};

async function check(path: string, rules: Rule[]) {
  const profile = profileOf(rules);
  const doc = await analyzeFile(path, { analysis: analysisOptionsForProfile(profile) });
  return evaluate(profile, doc);
}

describe('declared loudness in the analysis document', () => {
  it('puts each declared figure beside the reading of the same quantity', async () => {
    const path = await toneWith({
      bextLoudness: { integratedLufs: -23, loudnessRangeLu: 0, maxTruePeakDbtp: -20, maxShortTermLufs: -20 },
    });
    const doc = await analyzeFile(path);
    expect(doc.declaredLoudness).toHaveLength(1);
    const [bext] = doc.declaredLoudness;
    expect(bext.source).toBe('bext');
    expect(bext.rows.map((r) => [r.field, r.unit, r.declared])).toEqual([
      ['integratedLufs', 'LUFS', -23],
      ['loudnessRangeLu', 'LU', 0],
      ['maxTruePeakDbtp', 'dBTP', -20],
      ['maxShortTermLufs', 'LUFS', -20],
    ]);
    const integrated = bext.rows[0];
    expect(integrated.measured).toBe(doc.summary.integratedLufs);
    expect(integrated.measured).toBeCloseTo(-20, 1); // Tech 3341 case 1 style, +/-0.1 LU
    expect(integrated.measuredMinusDeclared).toBeCloseTo(3, 1);
    expect(bext.rows[2].measured).toBe(doc.summary.truePeakDbtp);
    expect('declaredLoudness' in doc.format).toBe(false);
  });

  it('is empty for a file that declares nothing', async () => {
    expect((await analyzeFile(await toneWith({}))).declaredLoudness).toEqual([]);
  });
});

describe('declared-loudness rule', () => {
  it('a file that declares -23.00 LUFS and measures -20 fails, and its flag names both numbers', async () => {
    const report = await check(await toneWith({ bextLoudness: { integratedLufs: -23 } }), [rule()]);
    expect(report.verdict).toBe('fail');
    const result = report.checks.find((c) => c.ruleId === 'declared');
    expect(result).toMatchObject({ type: 'declared-loudness', passed: false, outcome: 'fail', unit: 'LUFS' });
    expect(result?.explanation).toMatch(
      /declares -23\.00 LUFS, measured -20\.0 LUFS: 3\.0 LU apart \(tolerance ±0\.2 LU\)/,
    );
    const flags = report.flags.filter((f) => f.kind === 'declared_loudness_mismatch');
    expect(flags).toHaveLength(1);
    expect(flags[0]).toMatchObject({ ruleId: 'declared', severity: 'fail', channel: null, startSample: 0 });
    expect(flags[0].endSample).toBe(480000);
    expect(flags[0].message).toContain('-23.00 LUFS');
    expect(flags[0].message).toContain('-20.0 LUFS');
  });

  it('passes inside the default 0.2 LU (EBU R 128 item i, our reading) and fails just outside it', async () => {
    const inside = await check(await toneWith({ bextLoudness: { integratedLufs: -20.1 } }), [rule()]);
    expect(declaredCheck(inside)).toMatchObject({ passed: true, outcome: 'pass' });
    expect(declaredCheck(inside).explanation).toMatch(/^1 declared figure \(bext\) matches/);
    expect(inside.flags.filter((f) => f.kind === 'declared_loudness_mismatch')).toEqual([]);
    const outside = await check(await toneWith({ bextLoudness: { integratedLufs: -20.4 } }), [rule()]);
    expect(declaredCheck(outside)).toMatchObject({ passed: false });
  });

  it('takes a tolerance per field: loudness range 1 LU and true peak 0.4 dB by default, each configurable', async () => {
    const path = await toneWith({ bextLoudness: { loudnessRangeLu: 0.8, maxTruePeakDbtp: -20.3 } });
    expect(declaredCheck(await check(path, [rule()])).passed).toBe(true);
    const strict = await check(path, [rule({ loudnessRangeToleranceLu: 0.5, truePeakToleranceDb: 0.1 })]);
    expect(declaredCheck(strict).passed).toBe(false);
    expect(declaredCheck(strict).explanation).toMatch(/^2 declared figures of 2 differ/);
    expect(strict.flags.filter((f) => f.kind === 'declared_loudness_mismatch')).toHaveLength(2);
    const loose = await check(await toneWith({ bextLoudness: { integratedLufs: -23 } }), [
      rule({ integratedToleranceLu: 3.5 }),
    ]);
    expect(declaredCheck(loose).passed).toBe(true);
  });

  it('judges iXML figures too, naming the source', async () => {
    const report = await check(
      await toneWith({
        ixml: '<BWFXML><LOUDNESS><LOUDNESS_VALUE>-24.00</LOUDNESS_VALUE></LOUDNESS></BWFXML>',
        bextLoudness: { integratedLufs: -20 },
      }),
      [rule()],
    );
    expect(declaredCheck(report).passed).toBe(false);
    expect(declaredCheck(report).explanation).toMatch(
      /^1 declared figure of 2 differs from the readings: iXML integrated loudness declares -24\.00 LUFS/,
    );
  });

  it('a file without declared loudness passes unless requireDeclared', async () => {
    const path = await toneWith({});
    const lenient = await check(path, [rule()]);
    expect(declaredCheck(lenient)).toMatchObject({ passed: true, outcome: 'not_measurable' });
    const strict = await check(path, [rule({ requireDeclared: true })]);
    expect(declaredCheck(strict)).toMatchObject({ passed: false, outcome: 'fail' });
    expect(strict.verdict).toBe('fail');
  });

  it('without the rule a mismatch is a remark at the default tolerances, never in the verdict', async () => {
    const report = await check(await toneWith({ bextLoudness: { integratedLufs: -23 } }), [
      { id: 'tp', type: 'true-peak', severity: 'fail', maxDbtp: -1 },
    ]);
    expect(report.verdict).toBe('pass');
    expect(report.flags.filter((f) => f.kind === 'declared_loudness_mismatch')).toMatchObject([
      { severity: 'remark', ruleId: null },
    ]);
  });

  it('the profile schema takes the rule and refuses a negative tolerance', () => {
    expect(profileIssues({ ...profileOf([rule({ truePeakToleranceDb: 0.3 })]) })).toEqual([]);
    const bad = profileIssues({
      id: 'x',
      name: 'x',
      version: '1.0.0',
      description: '',
      basis: 'house rule',
      rules: [{ id: 'd', type: 'declared-loudness', severity: 'warn', integratedToleranceLu: -1 }],
    });
    expect(bad.map((i) => i.field)).toEqual([expect.stringMatching(/integratedToleranceLu/)]);
  });
});

describe('declared-loudness rule on digital silence', () => {
  it('has nothing to compare (no reading): not measurable, not failed', async () => {
    const report = await check(await toneWith({ bextLoudness: { integratedLufs: -23 } }, null), [rule()]);
    expect(declaredCheck(report)).toMatchObject({ passed: true, outcome: 'not_measurable' });
    expect(declaredCheck(report).explanation).toMatch(/no reading to compare the bext figures with/);
  });
});
