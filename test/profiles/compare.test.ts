// The re-delivery comparison on constructed reports: readings with deltas and units, rule
// outcomes, flags matched by kind, channel and time (tolerance FLAG_MATCH_TOLERANCE_SECONDS),
// verdict, and the warnings for different profiles or programmes.
import { describe, expect, it } from 'vitest';
import { EarmarkError } from '../../src/errors/index.ts';
import { compareReports, FLAG_MATCH_TOLERANCE_SECONDS, matchFlags } from '../../src/profiles/compare.ts';
import type { CheckResult, Flag, QcReport } from '../../src/profiles/index.ts';
import { reportFromJson, reportFromText } from '../../src/profiles/report-json.ts';
import { sampleReport } from '../views/sample-report.ts';

function report(edit: (r: QcReport) => void = () => undefined): QcReport {
  const r = structuredClone(sampleReport());
  // The sample is the little the pages read: complete the summary the comparison reads.
  Object.assign(r.summary, { reconstructedPeakDbtp: -0.3, dropouts: 0, truePeakOvers: 3 });
  edit(r);
  return r;
}

function flag(kind: Flag['kind'], channel: number | null, startSeconds: number, endSeconds: number, number = 1): Flag {
  return {
    number,
    kind,
    title: kind,
    ruleId: null,
    severity: 'fail',
    channel,
    channelName: channel === null ? 'all' : `${channel + 1}`,
    startSample: startSeconds * 48000,
    endSample: endSeconds * 48000,
    startSeconds,
    endSeconds,
    startTimecode: 'tc',
    endTimecode: 'tc',
    worstValue: null,
    unit: null,
    count: 1,
    detections: 1,
    message: '',
  };
}

const reading = (c: ReturnType<typeof compareReports>, key: string) => c.readings.find((r) => r.key === key);

describe('compareReports: readings', () => {
  it('gives each reading before, after and delta with units: LUFS moves by LU, dBTP by dB', () => {
    const c = compareReports(
      report(),
      report((r) => {
        r.summary.integratedLufs = -26.4;
        r.summary.truePeakDbtp = -3.42;
        r.format.sampleRate = 44100;
      }),
    );
    expect(reading(c, 'integratedLufs')).toMatchObject({ unit: 'LUFS', deltaUnit: 'LU', before: -23.4, after: -26.4 });
    expect(reading(c, 'integratedLufs')?.delta).toBeCloseTo(-3, 12);
    expect(reading(c, 'truePeakDbtp')).toMatchObject({ unit: 'dBTP', deltaUnit: 'dB', changed: true });
    expect(reading(c, 'truePeakDbtp')?.delta).toBeCloseTo(-3, 12);
    expect(reading(c, 'sampleRate')).toMatchObject({ unit: 'Hz', delta: -3900, changed: true });
    expect(reading(c, 'loudnessRangeLu')).toMatchObject({ unit: 'LU', delta: 0, changed: false });
  });

  it('a difference below half the shown digit is no change; a value on one side only is', () => {
    const c = compareReports(
      report(),
      report((r) => {
        r.summary.integratedLufs = -23.44; // shown -23.4 both times
        r.summary.truePeakDbtp = null; // digital silence has no peak
      }),
    );
    expect(reading(c, 'integratedLufs')?.changed).toBe(false);
    expect(reading(c, 'truePeakDbtp')).toMatchObject({ before: -0.42, after: null, delta: null, changed: true });
  });

  it('lists a changed channel layout among the format changes', () => {
    const c = compareReports(
      report(),
      report((r) => {
        r.format.channelLabels = ['L', 'L'];
      }),
    );
    expect(c.format.find((f) => f.key === 'channelLayout')).toEqual({
      key: 'channelLayout',
      label: 'Channel layout',
      before: 'L R',
      after: 'L L',
      changed: true,
    });
  });
});

describe('compareReports: rules and verdict', () => {
  const check = (ruleId: string, passed: boolean): CheckResult => ({
    ruleId,
    type: 'true-peak',
    severity: 'fail',
    source: null,
    measured: passed ? -2 : 0.5,
    unit: 'dBTP',
    limit: { max: -1 },
    outcome: passed ? 'pass' : 'fail',
    passed,
    explanation: '',
  });

  it('names each rule fixed, broken, still broken, met, added or removed', () => {
    const before = report((r) => {
      r.checks = [check('a', false), check('b', true), check('c', false), check('d', true), check('gone', true)];
    });
    const after = report((r) => {
      r.checks = [check('a', true), check('b', false), check('c', false), check('d', true), check('added', true)];
    });
    expect(compareReports(before, after).checks.map((k) => [k.ruleId, k.change])).toEqual([
      ['a', 'fixed'],
      ['b', 'broken'],
      ['c', 'still_broken'],
      ['d', 'still_met'],
      ['gone', 'removed'],
      ['added', 'added'],
    ]);
    const fixed = compareReports(before, after).checks[0];
    expect(fixed.before).toMatchObject({ measured: 0.5, unit: 'dBTP', outcome: 'fail' });
    expect(fixed.after).toMatchObject({ measured: -2, unit: 'dBTP', outcome: 'pass' });
  });

  it('verdict fail -> pass is better, pass -> warn worse, warn -> warn the same', () => {
    const v = (a: QcReport['verdict'], b: QcReport['verdict']) =>
      compareReports(
        report((r) => {
          r.verdict = a;
        }),
        report((r) => {
          r.verdict = b;
        }),
      ).verdict;
    expect(v('fail', 'pass')).toEqual({ before: 'fail', after: 'pass', change: 'better' });
    expect(v('pass', 'warn').change).toBe('worse');
    expect(v('warn', 'warn').change).toBe('same');
  });
});

describe('matchFlags', () => {
  it('keeps a flag of the same kind and channel whose span overlaps, resolves the rest, lists the new', () => {
    const m = matchFlags(
      [flag('clipping', 0, 5, 5.1, 1), flag('clipping', 1, 12, 12.1, 2), flag('dropout', 0, 8, 8.01, 3)],
      [flag('clipping', 0, 5.05, 5.2, 1), flag('silence_gap', null, 15, 20, 2)],
    );
    expect(m.persisting.map((p) => [p.before.number, p.after.number])).toEqual([[1, 1]]);
    expect(m.resolved.map((f) => f.number)).toEqual([2, 3]);
    expect(m.new.map((f) => f.kind)).toEqual(['silence_gap']);
    expect(m.toleranceSeconds).toBe(FLAG_MATCH_TOLERANCE_SECONDS);
  });

  it('the same kind on another channel is a different finding', () => {
    const m = matchFlags([flag('clipping', 0, 5, 5.1)], [flag('clipping', 1, 5, 5.1)]);
    expect([m.resolved.length, m.new.length, m.persisting.length]).toEqual([1, 1, 0]);
  });

  it(`matches spans up to ${FLAG_MATCH_TOLERANCE_SECONDS} s apart, not further`, () => {
    // Binary fractions, so the gaps are exact: 0.5 s apart matches, 0.5078125 s does not.
    expect(matchFlags([flag('dropout', 0, 10, 10.25)], [flag('dropout', 0, 10.75, 11)]).persisting).toHaveLength(1);
    expect(matchFlags([flag('dropout', 0, 10, 10.25)], [flag('dropout', 0, 10.7578125, 11)]).persisting).toHaveLength(
      0,
    );
  });

  it('one to one, each old flag taking the nearest: two old flags near one new leave one resolved', () => {
    const m = matchFlags(
      [flag('clipping', 0, 5, 5.01, 1), flag('clipping', 0, 5.3, 5.31, 2)],
      [flag('clipping', 0, 5.29, 5.3, 7), flag('clipping', 0, 5.02, 5.03, 8)],
    );
    expect(m.persisting.map((p) => [p.before.number, p.after.number])).toEqual([
      [1, 8],
      [2, 7],
    ]);
    const single = matchFlags(
      [flag('clipping', 0, 5, 5.01, 1), flag('clipping', 0, 5.3, 5.31, 2)],
      [flag('clipping', 0, 5.2, 5.25, 9)],
    );
    expect(single.persisting).toHaveLength(1);
    expect(single.resolved).toHaveLength(1);
  });
});

describe('compareReports: warnings (still compared)', () => {
  it('different profiles, and different versions of one profile', () => {
    const other = report((r) => {
      r.profile = { ...r.profile, id: 'ebu-r128' };
    });
    const newer = report((r) => {
      r.profile = { ...r.profile, version: '2' };
    });
    expect(compareReports(report(), other).warnings.map((w) => w.code)).toEqual(['different_profile']);
    expect(compareReports(report(), newer).warnings.map((w) => w.code)).toEqual(['different_profile_version']);
    expect(compareReports(report(), other).readings.length).toBeGreaterThan(0);
  });

  it('durations 5 % and 1 s apart mean different programmes; 0.5 s apart do not', () => {
    const lasting = (seconds: number) =>
      report((r) => {
        r.format.durationSeconds = seconds;
      });
    expect(compareReports(lasting(20), lasting(30)).warnings[0]).toMatchObject({
      code: 'different_programme',
      message: expect.stringContaining('10.000 s'),
    });
    expect(compareReports(lasting(20), lasting(20.5)).warnings).toEqual([]);
  });

  it('the same file twice, and a report whose flags were capped', () => {
    const hashed = (edit: (r: QcReport) => void = () => undefined) =>
      report((r) => {
        r.file = { name: 'a.wav', sizeBytes: 1, sha256: 'ab'.repeat(32) };
        edit(r);
      });
    expect(compareReports(hashed(), hashed()).warnings.map((w) => w.code)).toEqual(['same_file']);
    const capped = report((r) => {
      r.flagsTotal = 900;
      r.flagsTruncated = true;
    });
    expect(compareReports(capped, report()).warnings).toEqual([
      { code: 'flags_truncated', message: expect.stringContaining('old report lists 4 of its 900 flags') },
    ]);
    // Events past the analysis's event cap are not flags either: only listed flags are matched.
    const cut = report((r) => {
      r.unlistedEvents = [{ kind: 'clipping', ruleId: null, severity: 'remark', count: 12 }];
    });
    expect(compareReports(report(), cut).warnings).toEqual([
      { code: 'flags_truncated', message: expect.stringContaining("new report's analysis kept only its first events") },
    ]);
  });
});

describe('reportFromJson', () => {
  it('refuses what is not a report with a typed error naming the input', () => {
    const refused = (value: unknown) => {
      try {
        reportFromJson(value, 'the old file');
      } catch (error) {
        return error;
      }
      return null;
    };
    for (const value of [null, [], { reportVersion: 2 }, { ...report(), verdict: 'maybe' }]) {
      const error = refused(value);
      expect(error).toBeInstanceOf(EarmarkError);
      expect(error).toMatchObject({ code: 'invalid_argument', details: { field: 'the old file' } });
    }
    expect(() => reportFromText('{"reportVersion": 2', 'x')).toThrow(/x is not valid JSON/);
  });
});
