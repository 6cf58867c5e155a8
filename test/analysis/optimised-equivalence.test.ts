// The optimised meters read exactly what the straightforward implementations they replaced read
// (kept in test/helpers/reference-meters), on programme, loud-limited, clipped and gappy material
// cut into odd block sizes.
import { describe, expect, it } from 'vitest';
import { defaultChannelLabels, type Meter, type StreamInfo } from '../../src/analysis/audio.ts';
import { LevelMeter } from '../../src/analysis/levels.ts';
import { TruePeakMeter } from '../../src/analysis/true-peak.ts';
import { LoudnessMeter } from '../../src/analysis/loudness.ts';
import { ClippingMeter } from '../../src/analysis/clipping.ts';
import { SilenceMeter } from '../../src/analysis/silence.ts';
import { AnalysisRunner } from '../../src/analysis/runner.ts';
import { ChannelRelationMeter } from '../../src/analysis/channel-relations.ts';
import { ChannelRelationMeter as ReferenceChannelRelationMeter } from '../helpers/reference-meters/channel-relations.ts';
import { LevelMeter as ReferenceLevelMeter } from '../helpers/reference-meters/levels.ts';
import { TruePeakMeter as ReferenceTruePeakMeter } from '../helpers/reference-meters/true-peak.ts';
import { LoudnessMeter as ReferenceLoudnessMeter } from '../helpers/reference-meters/loudness.ts';
import { ClippingMeter as ReferenceClippingMeter } from '../helpers/reference-meters/clipping.ts';
import { SilenceMeter as ReferenceSilenceMeter } from '../helpers/reference-meters/silence.ts';
import { BLOCK_CUTS, cut, expectClose, SAMPLE_RATE, testSignals } from '../helpers/test-signals.ts';

/** The result, without the true-peak meter's pruning statistic (a benchmark figure that depends on block cuts). */
function run(meter: Meter<unknown>, channels: Float32Array[], sizes: number[]): unknown {
  for (const block of cut(channels, sizes)) meter.push(block);
  const { prunedFrames: _, ...readings } = meter.result() as Record<string, unknown>;
  return readings;
}

type Maker = (info: StreamInfo) => Meter<unknown>;
const pairs: Record<string, [Maker, Maker, number]> = {
  levels: [(i) => new LevelMeter(i), (i) => new ReferenceLevelMeter(i), 0],
  truePeak: [(i) => new TruePeakMeter(i, { overCeilingDbtp: -1 }), (i) => new ReferenceTruePeakMeter(i, { overCeilingDbtp: -1 }), 0],
  loudness: [
    (i) => new LoudnessMeter(i, { momentaryLimitLufs: -20, shortTermLimitLufs: -22 }),
    (i) => new ReferenceLoudnessMeter(i, { momentaryLimitLufs: -20, shortTermLimitLufs: -22 }),
    1e-9,
  ],
  clipping: [(i) => new ClippingMeter(i), (i) => new ReferenceClippingMeter(i), 0],
  // A high threshold and a short minimum, so programme material opens and closes many runs.
  silence: [
    (i) => new SilenceMeter(i, { thresholdDbfs: -30, minDurationSeconds: 0.01 }),
    (i) => new ReferenceSilenceMeter(i, { thresholdDbfs: -30, minDurationSeconds: 0.01 }),
    0,
  ],
  'silence (defaults)': [(i) => new SilenceMeter(i), (i) => new ReferenceSilenceMeter(i), 0],
  // The pair sums by the SIMD kernel: the scalar order, so the same to the bit.
  relations: [(i) => new ChannelRelationMeter(i), (i) => new ReferenceChannelRelationMeter(i), 0],
};

describe.each([1, 2, 6])('optimised meters equal the reference implementations (%i channels)', (channels) => {
  const info: StreamInfo = { sampleRate: SAMPLE_RATE, channels, channelLabels: defaultChannelLabels(channels) };
  const signals = testSignals(channels);
  for (const [meterName, [make, makeReference, tolerance]] of Object.entries(pairs)) {
    for (const [signalName, signal] of Object.entries(signals)) {
      it(`${meterName} on ${signalName}`, () => {
        const expected = run(makeReference(info), signal, [65_536]);
        for (const sizes of BLOCK_CUTS) expectClose(run(make(info), signal, sizes), expected, tolerance);
      });
    }
  }
});

describe('the runner shares one envelope per block', () => {
  it('every meter reads in the runner what it reads alone, on gappy and clipped stereo cut into odd blocks', () => {
    const info: StreamInfo = { sampleRate: SAMPLE_RATE, channels: 2, channelLabels: defaultChannelLabels(2) };
    const signals = testSignals(2, 4);
    for (const signal of [signals.gaps, signals.clipped]) {
      const sizes = BLOCK_CUTS[1];
      const runner = new AnalysisRunner(info);
      for (const block of cut(signal, sizes)) runner.push(block);
      const together = runner.result();
      expectClose(together.clipping, run(new ClippingMeter(info), signal, sizes), 0);
      expectClose(together.silence, run(new SilenceMeter(info), signal, sizes), 0);
      expectClose(together.levels, run(new LevelMeter(info), signal, sizes), 0);
      const { prunedFrames: _, ...truePeak } = together.truePeak;
      expectClose(truePeak, run(new TruePeakMeter(info), signal, sizes), 0);
    }
  });
});

describe('channel relations on copies and antiphase', () => {
  it('read what the scalar reference reads, bit for bit: identical, inverted and near copies, flagged windows', () => {
    const info: StreamInfo = { sampleRate: SAMPLE_RATE, channels: 4, channelLabels: ['L', 'R', 'Ls', 'Rs'] };
    const [left, right] = testSignals(2, 8).programme;
    // Antiphase from 2 s to 5 s: a phase_problem stretch.
    const antiphase = left.map((v, i) => (i > 2 * SAMPLE_RATE && i < 5 * SAMPLE_RATE ? -v : right[i]));
    const nearCopy = left.map((v, i) => v + (i % 7 === 0 ? 1e-7 : 0));
    const signal = [left, antiphase, Float32Array.from(left, (v) => -v), nearCopy];
    const expected = run(new ReferenceChannelRelationMeter(info), signal, [65_536]) as { events: unknown[] };
    expect(expected.events.length).toBeGreaterThanOrEqual(3);
    for (const sizes of BLOCK_CUTS) expectClose(run(new ChannelRelationMeter(info), signal, sizes), expected, 0);
  });
});
