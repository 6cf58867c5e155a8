// The parallel runner (whole meters per thread) reads exactly what the serial AnalysisRunner reads,
// on programme, clipped and gappy signals with 1, 2 and 6 channels, in odd block cuts.
import { afterAll, describe, expect, it } from 'vitest';
import { defaultChannelLabels, type StreamInfo } from '../../src/analysis/audio.ts';
import { AnalysisRunner, METER_NAMES, METERS, type AnalysisOptions } from '../../src/analysis/runner.ts';
import { meterGroups, ParallelAnalysisRunner } from '../../src/engine/parallel-runner.ts';
import { cut, expectClose, SAMPLE_RATE, testSignals } from '../helpers/test-signals.ts';

const options: AnalysisOptions = {
  truePeak: { overCeilingDbtp: -1 },
  loudness: { momentaryLimitLufs: -20, shortTermLimitLufs: -22 },
  silence: { minDurationSeconds: 0.5 },
};
const sizes = [4_097, 1, 7, 19_999];
const open: ParallelAnalysisRunner[] = [];
afterAll(async () => {
  await Promise.all(open.map((r) => r.close()));
});

describe('meter groups', () => {
  it('give every meter to exactly one thread', () => {
    for (const threads of [1, 2, 3, 7, 12]) {
      const groups = meterGroups(threads);
      expect(groups.flat().sort()).toEqual([...METER_NAMES].sort());
      expect(groups.length).toBeLessThanOrEqual(threads);
    }
  });

  it('for two threads, put the costliest meter (loudness) beside the decoding, not on the main thread with it', () => {
    const [main, worker] = meterGroups(2);
    expect(worker).toContain('loudness');
    expect(main).not.toContain('loudness');
    expect(main.length).toBeGreaterThan(0);
  });

  it('leave the decoding thread only the meters pinned to it when decoding alone outweighs the rest (a compressed file)', () => {
    const pinned = METER_NAMES.filter((name) => METERS[name].mainThreadOnly);
    expect(pinned).toEqual(['speech']);
    const [main, worker] = meterGroups(2, 200);
    expect(main).toEqual(pinned);
    expect(worker.sort()).toEqual(METER_NAMES.filter((name) => !pinned.includes(name)).sort());
  });

  it('keep the speech meter on the decoding thread whatever the split', () => {
    for (const threads of [2, 3, 4])
      for (const cost of [0, 10.5, 200, 600]) expect(meterGroups(threads, cost)[0]).toContain('speech');
  });
});

describe.each([1, 2, 6])('parallel analysis equals the serial runner (%i channels)', (channels) => {
  const info: StreamInfo = { sampleRate: SAMPLE_RATE, channels, channelLabels: defaultChannelLabels(channels) };
  const { programme, clipped, gaps } = testSignals(channels, 6);
  for (const [name, signal] of Object.entries({ programme, clipped, gaps })) {
    for (const threads of [2, 3]) {
      it(`${name}, ${threads} threads`, async () => {
        const serial = new AnalysisRunner(info, options);
        for (const block of cut(signal, sizes)) serial.push(block);
        const parallel = new ParallelAnalysisRunner(info, options, threads);
        open.push(parallel);
        for (const block of cut(signal, sizes)) await parallel.push(block);
        const expected = serial.result();
        const actual = await parallel.result();
        expectClose(actual, expected, 0);
        expect(Object.keys(actual)).toEqual(Object.keys(expected));
      }, 60_000);
    }
  }
});
