// Flags at known sample positions, their seconds and SMPTE ST 12-1 labels (with a BWF bext
// TimeReference, EBU Tech 3285), merging, the cap, and the loudness correction figure.

import { afterAll, describe, expect, it } from 'vitest';
import { builtinProfile, parseProfile, type Profile, type Rule } from '../../src/profiles/index.ts';
import { checkFile, checkOf, SAMPLE_RATE, setRange, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

const house = (rules: Rule[], frameRate: '25' | '29.97-df' = '25'): Profile =>
  parseProfile({
    id: 'test-house',
    name: 'Test house rules',
    version: '1.0.0',
    description: 'test',
    basis: 'house rule',
    timecode: { frameRate },
    rules,
  });
const clipRule: Rule = { id: 'no-clips', type: 'clipping', severity: 'fail', maxRuns: 0, minRunSamples: 3 };
// A ceiling above full scale: the clip runs below make no true-peak overs, so the flags are the runs alone.
const highCeiling: Rule = { id: 'tp-high', type: 'true-peak', severity: 'fail', maxDbtp: 3 };
const clipHouse = (frameRate: '25' | '29.97-df' = '25') => house([clipRule, highCeiling], frameRate);

/** Clip runs of 10 samples at full scale on channel 0 at the given sample positions. */
const clipsAt = (starts: number[]) => (data: Float32Array[], startFrame: number) => {
  for (const s of starts) setRange(s, s + 10, 1, [0])(data, startFrame);
};

describe('flags', () => {
  it('a clip run at sample 600000 is at 12.5 s, 00:00:12:12 at 25 fps (SMPTE ST 12-1, 25 fps non-drop)', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 20, peakDbfs: -20 }], edit: clipsAt([600000]) });
    const report = await checkFile(path, clipHouse());
    expect(report.verdict).toBe('fail');
    expect(report.flags).toHaveLength(1);
    expect(report.flags[0]).toMatchObject({
      kind: 'clipping',
      ruleId: 'no-clips',
      severity: 'fail',
      channel: 0,
      startSample: 600000,
      endSample: 600010,
      startSeconds: 12.5,
      startTimecode: '00:00:12:12',
      count: 1,
      detections: 10,
    });
  });

  it('counts from the BWF time reference: 10:00:00:00 + 12.5 s = 10:00:12:12 (EBU Tech 3285 TimeReference)', async () => {
    const path = await writeTone(dir, {
      segments: [{ seconds: 20, peakDbfs: -20 }],
      edit: clipsAt([600000]),
      timeReferenceSamples: 10 * 3600 * SAMPLE_RATE,
    });
    const report = await checkFile(path, clipHouse());
    expect(report.timecode).toMatchObject({ originSeconds: 36000, originTimecode: '10:00:00:00' });
    expect(report.flags[0].startTimecode).toBe('10:00:12:12');
    expect(report.flags[0].startSeconds).toBe(12.5); // seconds stay file-relative
  });

  it('29.97 drop-frame across a minute: origin 00:00:59;20 + 30 frames = 00:01:00;22 (SMPTE ST 12-1 drop-frame rule)', async () => {
    const origin = 1790 * 1601.6; // frame 1790 at 48 kHz: 1601.6 samples per 30000/1001 fps frame (exact here)
    const path = await writeTone(dir, {
      segments: [{ seconds: 3, peakDbfs: -20 }],
      edit: clipsAt([48048]),
      timeReferenceSamples: origin,
    });
    const report = await checkFile(path, clipHouse('29.97-df'));
    expect(report.timecode.originTimecode).toBe('00:00:59;20');
    expect(report.flags[0].startTimecode).toBe('00:01:00;22');
  });

  it('check --fps override: the same flag at 29.97 drop-frame instead of the profile rate', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 20, peakDbfs: -20 }], edit: clipsAt([600000]) });
    const report = await checkFile(path, clipHouse(), { frameRate: '29.97-df' });
    // 600000 samples = 374.625 frames at 30000/1001 -> frame 374 -> 00:00:12;14 (no drop in minute 0)
    expect(report.flags[0].startTimecode).toBe('00:00:12;14');
  });

  it('merges runs closer than the gap, keeps the count, and caps the list with a total', async () => {
    const near = [100000, 104800, 109600]; // 0.1 s apart: one flag
    const far = Array.from({ length: 12 }, (_, i) => 200000 + i * 48000); // 1 s apart: twelve flags
    const path = await writeTone(dir, { segments: [{ seconds: 20, peakDbfs: -20 }], edit: clipsAt([...near, ...far]) });
    const full = await checkFile(path, clipHouse());
    expect(full.flags).toHaveLength(13);
    expect(full.flags[0]).toMatchObject({ startSample: 100000, endSample: 109610, count: 3 });
    expect(full.flagsTruncated).toBe(false);
    const capped = await checkFile(path, clipHouse(), { maxFlags: 5 });
    expect(capped.flags).toHaveLength(5);
    expect(capped.flagsTotal).toBe(13);
    expect(capped.flagsTruncated).toBe(true);
    expect(checkOf(capped, 'no-clips').measured).toBe(15);
  });

  it('keeps fail flags before warn flags when capping', async () => {
    const path = await writeTone(dir, {
      segments: [
        { seconds: 10, peakDbfs: -20 },
        { seconds: 0.2, peakDbfs: -0.5 },
      ],
      edit: clipsAt([48000, 96000, 144000]),
    });
    const profile = house([
      { ...clipRule, severity: 'warn' },
      { id: 'tp', type: 'true-peak', severity: 'fail', maxDbtp: -1 },
    ]);
    const report = await checkFile(path, profile, { maxFlags: 2 });
    // 3 warn clip flags; 5 fail true-peak flags (each full-scale clip is also an over, plus the burst on 2 channels)
    expect(report.flags.map((f) => f.kind)).toEqual(['true_peak_over', 'true_peak_over']);
    expect(report.flagsTotal).toBe(8);
  });

  it('true-peak overs become flags per channel at the over, with the ceiling from the profile', async () => {
    const path = await writeTone(dir, {
      segments: [
        { seconds: 5, peakDbfs: -20 },
        { seconds: 0.2, peakDbfs: -0.5 },
        { seconds: 5, peakDbfs: -20 },
      ],
    });
    const report = await checkFile(path, builtinProfile('ebu-r128'));
    const overs = report.flags.filter((f) => f.kind === 'true_peak_over');
    expect(overs.map((f) => f.channel)).toEqual([0, 1]);
    for (const f of overs) {
      expect(f.startSeconds).toBeGreaterThanOrEqual(5);
      expect(f.endSeconds).toBeLessThanOrEqual(5.2);
      expect(f.worstValue).toBeGreaterThan(-1);
      expect(f.detections).toBeGreaterThan(1); // the engine merged many over samples into one event
      expect(f.startTimecode).toBe('00:00:05:00');
    }
  });

  it('a 3 s drop-out inside the programme is a silence_gap flag at 5 s - 8 s; head silence required but missing', async () => {
    const path = await writeTone(dir, {
      segments: [
        { seconds: 5, peakDbfs: -20 },
        { seconds: 3, peakDbfs: null },
        { seconds: 5, peakDbfs: -20 },
      ],
    });
    const report = await checkFile(
      path,
      house([
        { id: 'gap', type: 'silence-gap', severity: 'fail', maxSeconds: 2 },
        { id: 'lead-in', type: 'head-silence', severity: 'warn', minSeconds: 1 },
      ]),
    );
    const gap = report.flags.find((f) => f.kind === 'silence_gap');
    expect(gap?.startSeconds).toBeCloseTo(5, 3);
    expect(gap?.endSeconds).toBeCloseTo(8, 3);
    expect(gap?.startTimecode).toBe('00:00:05:00');
    expect(checkOf(report, 'lead-in').passed).toBe(false);
    expect(report.flags.find((f) => f.kind === 'head_silence')?.startTimecode).toBe('00:00:00:00');
  });

  it('loud short-term stretches over -18 LUFS are flagged (EBU Tech 3343 9.1)', async () => {
    const path = await writeTone(dir, {
      segments: [
        { seconds: 6, peakDbfs: -25 },
        { seconds: 4, peakDbfs: -16 },
        { seconds: 6, peakDbfs: -25 },
      ],
    });
    const report = await checkFile(path, builtinProfile('ebu-r128-short-form'));
    const loud = report.flags.filter((f) => f.kind === 'loud_short_term');
    expect(loud).toHaveLength(1);
    expect(loud[0].worstValue).toBeCloseTo(-16, 1);
    expect(loud[0].endSeconds).toBeGreaterThan(10);
  });

  it('a profile without a clipping rule shows clip runs as remarks', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -23 }], edit: clipsAt([100000]) });
    const report = await checkFile(path, builtinProfile('ebu-r128'));
    // Still visible, as a remark that does not touch the verdict.
    expect(report.flags.filter((f) => f.kind === 'clipping').map((f) => [f.severity, f.ruleId])).toEqual([
      ['remark', null],
    ]);
    expect(report.summary.clippingRuns).toBe(1);
  });
});

describe('correction', () => {
  it('gain to target and the true peak it would give (linear gain moves true peak by the gain, BS.1770-5 Annex 2)', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -20.4 }] });
    const report = await checkFile(path, builtinProfile('ebu-r128'));
    const k = report.correction!;
    expect(k.targetLufs).toBe(-23);
    expect(k.gainDb).toBeCloseTo(-2.6, 1);
    expect(k.truePeakAfterDbtp!).toBeCloseTo((report.summary.truePeakDbtp as number) + k.gainDb, 9);
    expect(k.exceedsCeiling).toBe(false);
  });

  it('says when the gain alone would break the ceiling (a limiter is needed)', async () => {
    const path = await writeTone(dir, {
      segments: [
        { seconds: 6, peakDbfs: -32 },
        { seconds: 0.005, peakDbfs: -3 },
        { seconds: 4, peakDbfs: -32 },
      ],
    });
    const report = await checkFile(path, builtinProfile('ebu-r128'));
    const k = report.correction!;
    expect(k.gainDb).toBeGreaterThan(7);
    expect(k.truePeakAfterDbtp!).toBeGreaterThan(-1);
    expect(k.exceedsCeiling).toBe(true);
    expect(checkOf(report, 'true-peak').passed).toBe(true); // fine now, not after the gain
  });

  it('a range profile corrects to the nearest end of the range (AES TD1004 -20..-16 LUFS)', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -24 }] });
    const k = (await checkFile(path, builtinProfile('streaming-aes'))).correction!;
    expect(k.targetLufs).toBe(-20);
    expect(k.gainDb).toBeCloseTo(4, 1);
  });

  it('integrated loudness below the gate is not measurable and fails; max-type rules pass with a note', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 2, peakDbfs: -80 }] });
    const report = await checkFile(path, builtinProfile('ebu-r128-short-form'));
    expect(checkOf(report, 'programme-loudness')).toMatchObject({ outcome: 'not_measurable', passed: false });
    expect(checkOf(report, 'short-term-max')).toMatchObject({ outcome: 'not_measurable', passed: true });
    expect(report.correction).toBeNull();
    expect(report.verdict).toBe('fail');
  });
});
