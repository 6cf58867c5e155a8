// Everything found is visible: findings no broken rule judges appear as remarks with timecode,
// channel name, count and worst value, and never change the verdict.

import { afterAll, describe, expect, it } from 'vitest';
import { formatReport } from '../../src/cli/check.ts';
import { builtinProfile, parseProfile, type Profile } from '../../src/profiles/index.ts';
import { writeDefectFile } from '../helpers/defect-files.ts';
import { checkFile, checkOf, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

const r128 = builtinProfile('ebu-r128');

describe('remarks under a standard-only profile', () => {
  it('clip runs show under ebu-r128 as remarks with count, end and worst value; true-peak overs fail', async () => {
    const file = await writeDefectFile(dir, 'clip');
    const report = await checkFile(file.path, r128);
    const clips = report.flags.filter((f) => f.kind === 'clipping');
    // Five 10-sample runs 1 s apart: more than the 0.5 s merge gap, so five flags (common practice: 3 samples make a run).
    expect(clips).toHaveLength(5);
    for (const f of clips) {
      expect(f).toMatchObject({
        severity: 'remark',
        ruleId: null,
        channel: 0,
        channelName: '1 L',
        count: 1,
        detections: 10,
        unit: 'dBFS',
      });
      expect(f.worstValue).toBeCloseTo(0, 4); // full scale in 24-bit: 20 log10(8388607/8388608)
    }
    expect(clips[0]).toMatchObject({ startSample: 240000, endSample: 240010 });
    expect(report.flags.some((f) => f.kind === 'true_peak_over' && f.severity === 'fail')).toBe(true);
    expect(report.flagCounts.remark).toBeGreaterThanOrEqual(5);
    // Numbers run 1..n in order, as printed.
    expect(report.flags.map((f) => f.number)).toEqual(report.flags.map((_, i) => i + 1));
    const text = formatReport(report);
    expect(text).toContain(`#${clips[0].number}`);
    expect(text).toMatch(/Clipping run {2}ch 1 L {2}worst 0\.0 dBFS/);
  });

  it('a clean file under ebu-r128 passes with no flags and prints its key readings', async () => {
    const file = await writeDefectFile(dir, 'clean');
    const report = await checkFile(file.path, r128);
    expect(report.verdict).toBe('pass');
    expect(report.flags).toEqual([]);
    const text = formatReport(report);
    expect(text.split('\n')[0]).toMatch(/^PASS: all 3 checks met; integrated -23\.0 LUFS, true peak -23\.0 dBTP$/);
    expect(text).toMatch(
      /readings integrated -23\.0 LUFS, LRA [0-9.]+ LU, true peak -23\.0 dBTP \(reconstructed -23\.0 dBTP\), sample peak -23\.0 dBFS/,
    );
  });

  it('a mid-programme gap, an anti-phase passage and an inverted channel are remarks under ebu-r128, and the verdict stays pass', async () => {
    const gap = await checkFile((await writeDefectFile(dir, 'gap')).path, r128);
    expect(gap.verdict).toBe('pass');
    const gapFlag = gap.flags.find((f) => f.kind === 'silence_gap');
    expect(gapFlag).toMatchObject({ severity: 'remark', channelName: 'all', startSample: 8 * 48000 });
    // L's sine crosses zero exactly at 19 s (997 Hz x 19 s = 18943 whole cycles), so the gap may end a sample later.
    expect(gapFlag?.endSample).toBeGreaterThanOrEqual(19 * 48000);
    expect(gapFlag?.endSample).toBeLessThanOrEqual(19 * 48000 + 1);
    // The channels' own silences inside the same gap are not repeated.
    expect(gap.flags.filter((f) => f.kind === 'silence')).toEqual([]);

    const phase = await checkFile((await writeDefectFile(dir, 'phase')).path, r128);
    expect(phase.verdict).toBe('pass');
    const anti = phase.flags.filter((f) => f.kind === 'phase_problem');
    expect(anti.length).toBeGreaterThan(0);
    expect(anti[0]).toMatchObject({
      severity: 'remark',
      channelName: '1 L',
      otherChannelName: '2 R',
      unit: 'correlation',
    });
    expect(anti[0].worstValue).toBeLessThan(-0.99);
    expect(anti[0].startSeconds).toBeGreaterThanOrEqual(7);
    expect(anti[anti.length - 1].endSeconds).toBeLessThanOrEqual(15);

    const inverted = await checkFile((await writeDefectFile(dir, 'inverted')).path, r128);
    expect(inverted.flags.some((f) => f.kind === 'inverted_channel' && f.severity === 'remark')).toBe(true);
  });

  it('a dropout in one channel is a remark under ebu-r128 and a failure under the broadcast delivery profile', async () => {
    const file = await writeDefectFile(dir, 'dropout');
    const plain = await checkFile(file.path, r128);
    expect(plain.verdict).toBe('pass');
    const remark = plain.flags.find((f) => f.kind === 'dropout');
    expect(remark).toMatchObject({
      severity: 'remark',
      channel: 1,
      channelName: '2 R',
      startSample: file.atSample,
      endSample: file.endSample,
    });
    const delivery = await checkFile(file.path, builtinProfile('delivery-broadcast-stereo'));
    expect(delivery.verdict).toBe('fail');
    expect(checkOf(delivery, 'no-dropouts')).toMatchObject({ passed: false, measured: 1 });
    expect(delivery.flags.find((f) => f.kind === 'dropout')).toMatchObject({
      severity: 'fail',
      ruleId: 'no-dropouts',
      startTimecode: '00:00:08:00',
    });
  });

  it('a dropout rule scoped to other channels leaves a dropout in R as a remark', async () => {
    const file = await writeDefectFile(dir, 'dropout');
    const scoped: Profile = parseProfile({
      id: 'house-left-only',
      name: 'L only',
      version: '1.0.0',
      description: 'test',
      basis: 'house rule',
      rules: [{ id: 'left-dropouts', type: 'dropouts', severity: 'fail', channels: ['L'] }],
    });
    const report = await checkFile(file.path, scoped);
    expect(report.verdict).toBe('pass');
    expect(checkOf(report, 'left-dropouts').measured).toBe(0);
    expect(report.flags.find((f) => f.kind === 'dropout')?.severity).toBe('remark');
  });

  it('head and tail silence of 3 s are remarks under ebu-r128 (over the 2 s silence minimum, common practice)', async () => {
    const path = await writeTone(dir, {
      segments: [
        { seconds: 3, peakDbfs: null },
        { seconds: 10, peakDbfs: -23 },
        { seconds: 3, peakDbfs: null },
      ],
    });
    const report = await checkFile(path, r128);
    expect(
      report.flags
        .filter((f) => f.kind === 'head_silence' || f.kind === 'tail_silence')
        .map((f) => [f.kind, f.severity, f.startSample, f.endSample]),
    )
      // The tone's first sample (sin 0) is itself silent, so the head ends one sample after 3 s.
      .toEqual([
        ['head_silence', 'remark', 0, 144001],
        ['tail_silence', 'remark', 624000, 768000],
      ]);
  });
});

describe('measurement tolerance (EBU R 128 items h and i)', () => {
  it('-24.1 LUFS is marginal (warn) under a -23 +/-1 LU target with +/-0.2 LU measurement tolerance; -24.3 fails', async () => {
    const profile = builtinProfile('delivery-broadcast-stereo');
    // 997 Hz stereo sine: peak dBFS = LUFS (BS.1770-5).
    const marginal = await checkFile(
      await writeTone(dir, { segments: [{ seconds: 10, peakDbfs: -24.1, frequencyHz: 997 }] }),
      profile,
    );
    expect(checkOf(marginal, 'programme-loudness')).toMatchObject({
      outcome: 'marginal',
      passed: false,
      severity: 'warn',
    });
    const beyond = await checkFile(
      await writeTone(dir, { segments: [{ seconds: 10, peakDbfs: -24.3, frequencyHz: 997 }] }),
      profile,
    );
    expect(checkOf(beyond, 'programme-loudness')).toMatchObject({ outcome: 'fail', passed: false, severity: 'fail' });
    const inside = await checkFile(
      await writeTone(dir, { segments: [{ seconds: 10, peakDbfs: -23.9, frequencyHz: 997 }] }),
      profile,
    );
    expect(checkOf(inside, 'programme-loudness')).toMatchObject({ outcome: 'pass', passed: true });
  });
});
