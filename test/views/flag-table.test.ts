// The flag table's wording and grouping (assets/flag-table.js), in Node: start and end in timecode
// and seconds, duration, count, worst value with its unit, channel name, rule; a repeating kind
// becomes one group with its totals.
import { describe, expect, it } from 'vitest';
import {
  channelCellText,
  durationText,
  flagGroups,
  lengthText,
  ruleText,
  secondsText,
  worstText,
} from '../../src/views/assets/flag-table.js';
import { flagView } from '../../src/views/assets/format.js';
import { BUSY_KINDS, busyReport } from './busy-report.ts';
import { sampleFlags } from './sample-report.ts';

describe('flag table', () => {
  it('says each fact of one flag with its unit', () => {
    const warn = flagView(sampleFlags[1], 1);
    expect(durationText(warn)).toBe('0.300 s');
    expect(worstText(warn)).toBe('-0.4 dBTP');
    expect(channelCellText(warn)).toBe('1 L');
    expect(ruleText(warn)).toBe('true-peak');
    const cut = flagView(sampleFlags[0], 0);
    expect(durationText(cut)).toBe('point');
    expect(worstText(cut)).toBe('–');
    expect(ruleText(cut)).toBe('none');
    expect(channelCellText(cut)).toBe('all');
    expect(channelCellText({ channelName: '2 R', otherChannelName: '1 L' })).toBe('2 R with 1 L');
  });

  it('cuts seconds down to the millisecond as the timecode does, and gives short lengths in ms', () => {
    // 239986 samples at 48 kHz = 4.99970833 s: in frame 124 at 25 fps (00:00:04:24), so 4.999 s, not 5.000 s.
    expect(secondsText(239986 / 48000)).toBe('4.999 s');
    expect(secondsText(0.453)).toBe('0.453 s');
    expect(secondsText(12)).toBe('12.000 s');
    // A 24-sample clip run at 48 kHz lasts 0.5 ms.
    expect(lengthText(24 / 48000)).toBe('0.5 ms');
    expect(lengthText(0.3)).toBe('0.300 s');
  });

  it('reads a null level of a dropout or gap as digital silence (analysis/events.ts: no peakValue for digital zero)', () => {
    expect(worstText({ kind: 'dropout', worstValue: null, unit: null })).toBe('digital silence');
    expect(worstText({ kind: 'silence_gap', worstValue: null, unit: null })).toBe('digital silence');
    expect(worstText({ kind: 'tone_into_programme', worstValue: null, unit: null })).toBe('–');
    expect(worstText({ kind: 'phase_problem', worstValue: -0.8125, unit: 'correlation' })).toBe('-0.81 correlation');
  });

  it('groups a kind that repeats, with its span, total duration, count, worst value, channels and rules', () => {
    const report = busyReport();
    const groups = flagGroups(report.flags);
    expect(groups).toHaveLength(BUSY_KINDS.length);
    expect(groups.map((g) => g.severity)).toEqual(['fail', 'fail', 'warn', 'warn', 'remark', 'remark']);
    expect(groups.reduce((n, g) => n + g.members.length, 0)).toBe(report.flags.length);
    const clips = groups.find((g) => g.kind === 'clipping');
    const clipFlags = report.flags.filter((f) => f.kind === 'clipping');
    expect(clips?.members).toHaveLength(260);
    expect(clips?.count).toBe(clipFlags.reduce((n, f) => n + f.count, 0));
    expect(clips?.startSeconds).toBe(Math.min(...clipFlags.map((f) => f.startSeconds)));
    expect(clips?.endSeconds).toBe(Math.max(...clipFlags.map((f) => f.endSeconds)));
    expect(clips?.durationSeconds).toBeCloseTo(
      clipFlags.reduce((s, f) => s + f.endSeconds - f.startSeconds, 0),
      9,
    );
    const worst = Math.max(...clipFlags.map((f) => f.worstValue ?? -Infinity));
    expect(clips?.worst).toBe(`${worst.toFixed(1).replace(/^-(0\.0)$/, '$1')} dBFS`);
    expect(clips?.channels).toBe('2 R, 1 L');
    expect(clips?.rules).toBe('no-clips');
    // Members stay in report order, so each keeps its number.
    expect(clips?.members.map((m) => m.flag.number)).toEqual(clipFlags.map((f) => f.number));
  });

  it('takes the lowest correlation as the worst of anti-phase passages, the loudest sample of dropouts', () => {
    const base = { title: 't', severity: 'remark', ruleId: null, channel: 0, channelName: '1 L', count: 1 };
    const at = (s: number) => ({ startSeconds: s, endSeconds: s + 1, startTimecode: `${s}`, endTimecode: `${s + 1}` });
    const phase = flagGroups([
      { ...base, ...at(1), kind: 'phase_problem', worstValue: -0.6, unit: 'correlation' },
      { ...base, ...at(5), kind: 'phase_problem', worstValue: -0.95, unit: 'correlation' },
    ]);
    expect(phase[0].worst).toBe('-0.95 correlation');
    const dropouts = flagGroups([
      { ...base, ...at(1), kind: 'dropout', worstValue: null, unit: null },
      { ...base, ...at(5), kind: 'dropout', worstValue: -72.3, unit: 'dBFS' },
    ]);
    expect(dropouts[0].worst).toBe('-72.3 dBFS');
    const digital = flagGroups([
      { ...base, ...at(1), kind: 'dropout', worstValue: null, unit: null },
      { ...base, ...at(5), kind: 'dropout', worstValue: null, unit: null },
    ]);
    expect(digital[0].worst).toBe('digital silence');
  });
});
