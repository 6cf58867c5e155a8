// `earmark compare` on a fixed re-delivery: a delivery that fails (too loud, clipped, over the
// true-peak ceiling) and the same samples turned down by the gain its report asks for. Checked,
// then compared from a saved report and from the audio files themselves.
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.ts';
import { openAudioFile } from '../../src/decode/index.ts';
import type { Comparison } from '../../src/profiles/compare.ts';
import type { QcReport } from '../../src/profiles/index.ts';
import { tempDir } from '../profiles/helpers.ts';
import { decodeAll } from '../helpers/decode-all.ts';
import { loadEbur128Reference } from '../helpers/ebur128-reference.ts';
import { writeFixedDelivery, writeHotDelivery, REDELIVERY_RATE } from '../helpers/redelivery.ts';
import { capture } from '../helpers/cli-io.ts';

const PROFILE = 'delivery-broadcast-stereo';

const { dir, cleanup } = tempDir();
let hot = '';
let fixed = '';
let hotReportPath = '';
let hotReport: QcReport;
let gainDb = 0;

beforeAll(async () => {
  hot = await writeHotDelivery(dir);
  const io = capture();
  expect(await main(['check', hot, '--profile', PROFILE, '--json'], io)).toBe(2);
  hotReport = JSON.parse(io.out);
  hotReportPath = join(dir, 'hot.report.json');
  writeFileSync(hotReportPath, io.out);
  // The fix an engineer makes from the report: the gain it names, applied to the same samples.
  gainDb = hotReport.correction?.gainDb ?? Number.NaN;
  fixed = await writeFixedDelivery(dir, gainDb);
});
afterAll(cleanup);

describe('earmark compare: a fixed re-delivery', () => {
  it('the first delivery fails on loudness, true peak and clipping', () => {
    expect(hotReport.verdict).toBe('fail');
    const broken = hotReport.checks.filter((c) => !c.passed).map((c) => c.ruleId);
    expect(broken).toEqual(expect.arrayContaining(['programme-loudness', 'true-peak', 'no-clipping']));
    expect(gainDb).toBeLessThan(-10);
  });

  it('saved report against the fixed file (--json): verdict fail -> pass, loudness moved by the gain, flags resolved', async () => {
    const io = capture();
    expect(await main(['compare', hotReportPath, fixed, '--profile', PROFILE, '--json'], io)).toBe(0);
    const c: Comparison = JSON.parse(io.out);
    expect(c.verdict).toEqual({ before: 'fail', after: 'pass', change: 'better' });
    const integrated = c.readings.find((r) => r.key === 'integratedLufs');
    expect(integrated).toMatchObject({ unit: 'LUFS', deltaUnit: 'LU' });
    // ITU-R BS.1770-5 Annex 1: the loudness is 10 log10 of gated mean squares, and the relative
    // gate follows the level, so a gain of g dB moves the integrated loudness by exactly g LU.
    expect(Math.abs((integrated?.delta ?? Number.NaN) - gainDb)).toBeLessThan(0.1);
    // A linear gain moves every peak by the gain too (ITU-R BS.1770-5 Annex 2 is a linear filter).
    const truePeak = c.readings.find((r) => r.key === 'truePeakDbtp');
    expect(Math.abs((truePeak?.delta ?? Number.NaN) - gainDb)).toBeLessThan(0.1);
    expect(c.readings.find((r) => r.key === 'clippingRuns')).toMatchObject({ after: 0, changed: true });
    const fixedRules = c.checks.filter((k) => k.change === 'fixed').map((k) => k.ruleId);
    expect(fixedRules).toEqual(expect.arrayContaining(['programme-loudness', 'true-peak', 'no-clipping']));
    expect(c.checks.filter((k) => k.change === 'broken' || k.change === 'still_broken')).toEqual([]);
    const resolvedKinds = new Set(c.flags.resolved.map((f) => f.kind));
    expect([...resolvedKinds]).toEqual(expect.arrayContaining(['clipping', 'true_peak_over']));
    expect(c.flags.resolved.filter((f) => f.severity === 'fail').length).toBe(
      hotReport.flags.filter((f) => f.severity === 'fail').length,
    );
    expect(c.flags.new).toEqual([]);
    expect(c.flags.persisting).toEqual([]);
    expect(c.warnings).toEqual([]);
  });

  it('the loudness delta agrees with an independent meter (ebur128-wasm) on the two files', async () => {
    const io = capture();
    await main(['compare', hotReportPath, fixed, '--profile', PROFILE, '--json'], io);
    const ours = (JSON.parse(io.out) as Comparison).readings.find((r) => r.key === 'integratedLufs')?.delta;
    const reference = await loadEbur128Reference();
    const integrated = async (path: string) => {
      const [left, right] = await decodeAll(await openAudioFile(path));
      return reference.integratedStereo(REDELIVERY_RATE, left, right);
    };
    const theirs = (await integrated(fixed)) - (await integrated(hot));
    expect(Math.abs((ours ?? Number.NaN) - theirs)).toBeLessThan(0.1);
  });

  it('two audio files, text: units on every value, the verdict first', async () => {
    const io = capture();
    expect(await main(['compare', hot, fixed, '--profile', PROFILE], io)).toBe(0);
    const lines = io.out.split('\n');
    expect(lines[0]).toBe('verdict  FAIL -> PASS  (better)');
    expect(io.out).toMatch(/Integrated loudness +-\d+\.\d LUFS +-23\.\d LUFS +-1\d\.\d LU\n/);
    expect(io.out).toMatch(/True peak +\d\.\d dBTP +-\d+\.\d dBTP +-1\d\.\d dB\n/);
    expect(io.out).toMatch(/Sample rate +48000 Hz +48000 Hz +same\n/);
    expect(io.out).toMatch(/fixed +no-clipping: \d+ runs \(fail\) -> 0 runs \(pass\)/);
    expect(io.out).toMatch(/flags +\d+ resolved, 0 new, 0 persisting {2}\(same kind and channel within 0\.5 s\)/);
    expect(io.out).toMatch(
      /resolved +#\d+ 00:00:\d\d:\d\d - 00:00:\d\d:\d\d \(\d+\.\d{3} s - \d+\.\d{3} s\) {2}fail {2}Clipping run {2}ch 1 L {2}worst 0\.0 dBFS/,
    );
    // Every reading line names its unit on both sides.
    const readingLines = lines
      .slice(lines.indexOf(lines.find((l) => l.startsWith('readings')) ?? '') + 1)
      .filter((l) => /^ {2}[A-Z]/.test(l));
    expect(readingLines.length).toBeGreaterThan(15);
    for (const line of readingLines)
      expect(line).toMatch(/\d (LUFS|LU|dBTP|dBFS|s|Hz|bit|ch|runs|samples|overs|dropouts) +-?\d/);
  });

  it('the other way round: exit 2 with the new file failing, its flags new', async () => {
    const io = capture();
    expect(await main(['compare', fixed, hotReportPath, '--profile', PROFILE, '--json'], io)).toBe(2);
    const c: Comparison = JSON.parse(io.out);
    expect(c.verdict.change).toBe('worse');
    expect(c.flags.resolved).toEqual([]);
    expect(c.flags.new.length).toBe(hotReport.flags.length);
  });

  it('a report against itself: everything persists, same file warned', async () => {
    const io = capture();
    expect(await main(['compare', hotReportPath, hotReportPath, '--json'], io)).toBe(2);
    const c: Comparison = JSON.parse(io.out);
    expect(c.flags.persisting.length).toBe(hotReport.flags.length);
    expect(c.warnings.map((w) => w.code)).toContain('same_file');
    expect(c.readings.every((r) => !r.changed)).toBe(true);
  });
});

describe('earmark compare: bad input is exit 3 with a typed error', () => {
  it('an audio file without --profile', async () => {
    const io = capture();
    expect(await main(['compare', hotReportPath, fixed], io)).toBe(3);
    expect(io.err).toMatch(/^error invalid_argument: the new file \(.*\) is an audio file: give --profile/);
  });

  it('one file, a missing file, JSON that is no report, a report cut short', async () => {
    const notReport = join(dir, 'other.json');
    writeFileSync(notReport, '{"name": "not a report"}');
    const cut = join(dir, 'cut.json');
    writeFileSync(cut, readFileSync(hotReportPath, 'utf8').slice(0, 500));
    const cases: Array<[string[], RegExp]> = [
      [['compare', hotReportPath], /^error invalid_argument: compare needs two files/],
      [['compare', hotReportPath, join(dir, 'missing.wav')], /^error file_not_found: cannot read/],
      [['compare', dir, hotReportPath], /^error file_not_found: cannot read/],
      [['compare', notReport, hotReportPath], /^error invalid_argument: the old file \(.*\) is not an Earmark report/],
      [['compare', hotReportPath, cut], /^error invalid_argument: the new file \(.*\) is not valid JSON/],
    ];
    for (const [args, message] of cases) {
      const io = capture();
      expect(await main(args, io)).toBe(3);
      expect(io.err).toMatch(message);
    }
  });
});
