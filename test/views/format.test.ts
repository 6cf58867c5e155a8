// The pages' wording (src/views/assets/format.js): pure functions, so checked here without a browser.
import { describe, expect, it } from 'vitest';
import {
  channelText,
  countText,
  dateTimeText,
  failureHint,
  flagCountsText,
  flagDetails,
  flagLabel,
  flagView,
  headlineNamesVerdict,
  outcomeText,
  spanText,
  stateCounts,
  worstValueText,
} from '../../src/views/assets/format.js';
import { sampleFlags } from './sample-report.ts';

describe('flag wording', () => {
  it("prints a flag's span, channel, count and worst value in reading order", () => {
    expect(flagDetails(sampleFlags[1])).toEqual(['00:00:01:05 – 00:00:01:13', 'ch 1 L', '× 3', 'worst -0.4 dBTP']);
    expect(flagLabel(sampleFlags[3])).toBe('#4 Dropout (remark), 00:00:03:00 – 00:00:04:05, ch 2 R, × 37');
  });

  it('shows one timecode for a point, "all channels" for all, both channels of a pair', () => {
    expect(spanText(sampleFlags[0])).toBe('00:00:05:00');
    expect(channelText({ channelName: 'all' })).toBe('all channels');
    expect(channelText({ channelName: '1 L', otherChannelName: '2 R' })).toBe('ch 1 L with 2 R');
  });

  it('shows a count only when a flag merges more than one event', () => {
    expect(countText({ count: 1 })).toBeNull();
    expect(countText({ count: 37 })).toBe('× 37');
  });

  it('reads levels to 0.1 and correlations to 0.01; no value, no text', () => {
    expect(worstValueText({ worstValue: -0.04, unit: 'dBTP' })).toBe('0.0 dBTP');
    expect(worstValueText({ worstValue: -0.05, unit: 'dBTP' })).toBe('-0.1 dBTP');
    expect(worstValueText({ worstValue: -38.06, unit: 'dBFS' })).toBe('-38.1 dBFS');
    expect(worstValueText({ worstValue: -0.934, unit: 'correlation' })).toBe('-0.93 correlation');
    expect(worstValueText({ worstValue: null, unit: 'dBTP' })).toBeNull();
  });

  it('reads a v1 flag (peakValue, mergedEvents, no number or title) with the same words', () => {
    const v1 = {
      kind: 'true_peak_over',
      severity: 'fail',
      channel: 1,
      startTimecode: '00:00:01:00',
      endTimecode: '00:00:01:00',
      peakValue: 0.3,
      mergedEvents: 4,
    };
    const view = flagView(v1, 6);
    expect(view).toMatchObject({
      number: 7,
      title: 'True peak over',
      channelName: '2',
      worstValue: 0.3,
      count: 4,
      unit: null,
    });
    expect(flagView({ ...v1, channel: null }, 0).channelName).toBe('all');
  });
});

describe('counts, outcomes and failure hints', () => {
  it('counts flags by severity, remarks pluralised', () => {
    expect(flagCountsText({ flagCounts: { fail: 3, warn: 1, remark: 12 }, flags: [] })).toBe(
      '3 fail · 1 warn · 12 remarks',
    );
    expect(flagCountsText({ flagCounts: { fail: 0, warn: 0, remark: 1 }, flags: [] })).toBe(
      '0 fail · 0 warn · 1 remark',
    );
    // A v1 report has no counts: they come from its flags.
    expect(flagCountsText({ flags: [{ severity: 'fail' }, { severity: 'fail' }, { severity: 'warn' }] })).toBe(
      '2 fail · 1 warn · 0 remarks',
    );
  });

  it('adds a verdict badge to the headline only when its words do not name the verdict', () => {
    expect(headlineNamesVerdict('FAIL: damaged file at 00:00:05:00', 'fail')).toBe(true);
    expect(headlineNamesVerdict('Damaged: audio ends at 00:00:05:00', 'fail')).toBe(false);
    expect(headlineNamesVerdict('Analysis failed: not audio', null)).toBe(false);
  });

  it('names a marginal outcome "marginal", never "not met"', () => {
    expect(outcomeText({ outcome: 'marginal', passed: false })).toBe('marginal');
    expect(outcomeText({ outcome: 'fail', passed: false })).toBe('not met');
    expect(outcomeText({ outcome: 'pass', passed: true })).toBe('met');
    expect(outcomeText({ outcome: 'not_measurable', passed: false })).toBe('not measurable');
  });

  it('tells what to do for a failed job, with a fallback for any other code', () => {
    expect(failureHint('unsupported_format')).toMatch(/^Re-export the audio as WAV or FLAC/);
    expect(failureHint('decoded_size_exceeded')).toMatch(/shorter file/);
    expect(failureHint('internal_error')).toMatch(/job id/);
  });
});

describe('dashboard list wording', () => {
  it('shows a time with its date, year first and 24-hour, in the local zone', () => {
    const local = new Date(2026, 0, 5, 7, 4, 9);
    expect(dateTimeText(local.toISOString())).toBe('2026-01-05 07:04:09');
    expect(dateTimeText(null)).toBe('–');
    expect(dateTimeText('not a date')).toBe('–');
  });

  it("counts the list's rows by state", () => {
    const rows = [{ state: 'completed' }, { state: 'failed' }, { state: 'completed' }, { state: 'queued' }];
    expect(stateCounts(rows)).toEqual({ shown: 4, queued: 1, active: 0, completed: 2, failed: 1 });
  });
});
