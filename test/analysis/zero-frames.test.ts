// A stream of zero frames (an empty data chunk, a file cut right after its header) still gets a
// result from every meter: no throw, and "no value" is null, never NaN or +-Infinity (JSON has
// neither; DEVELOPERS.md: a level of digital silence is null).
import { describe, expect, it } from 'vitest';
import type { ChannelLabel, StreamInfo } from '../../src/analysis/audio.ts';
import { AnalysisRunner, METER_NAMES } from '../../src/analysis/runner.ts';

/** Paths to every number in `value` that is NaN or +-Infinity (typed arrays included). */
function nonFinitePaths(value: unknown, path = '$'): string[] {
  if (typeof value === 'number') return Number.isFinite(value) ? [] : [`${path} = ${value}`];
  if (value === null || typeof value !== 'object') return [];
  return Object.entries(value).flatMap(([k, v]) => nonFinitePaths(v, `${path}.${k}`));
}

const layouts: [string, ChannelLabel[]][] = [
  ['mono', ['M']],
  ['stereo', ['L', 'R']],
  ['5.1', ['L', 'R', 'C', 'LFE', 'Ls', 'Rs']],
];

describe('every meter on zero frames', () => {
  it.each(layouts)('%s, with and without a declared length: results without NaN or Infinity', (_, labels) => {
    for (const expectedFrames of [undefined, 48_000]) {
      const info: StreamInfo = {
        sampleRate: 48000,
        channels: labels.length,
        channelLabels: labels,
        ...(expectedFrames ? { expectedFrames } : {}),
      };
      const runner = new AnalysisRunner(info);
      const m = runner.result();
      expect(m.frames).toBe(0);
      for (const name of METER_NAMES) expect(m[name], name).toBeDefined();
      expect(nonFinitePaths(m)).toEqual([]);
    }
  });

  it('each meter alone gives its result too (a meter pushed nothing computes no envelope)', () => {
    const info: StreamInfo = { sampleRate: 44100, channels: 2, channelLabels: ['L', 'R'] };
    for (const name of METER_NAMES) {
      const m = new AnalysisRunner(info, {}, [name]).partialResult();
      expect(nonFinitePaths(m[name]), name).toEqual([]);
    }
  });

  it('loudness and levels read null where there is nothing to measure', () => {
    const m = new AnalysisRunner({ sampleRate: 48000, channels: 2, channelLabels: ['L', 'R'] }).result();
    expect(m.loudness).toMatchObject({
      integratedLufs: null,
      loudnessRangeLu: null,
      maxMomentaryLufs: null,
      maxShortTermLufs: null,
      gatingBlocks: 0,
    });
    expect(m.loudness.momentaryLufs.length).toBe(0);
    expect(m.truePeak.truePeakDbtp).toBeNull();
  });
});
