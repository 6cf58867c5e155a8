// The optimised meters read exactly what the straightforward implementations they replaced read
// (kept in test/helpers/reference-meters), on programme, loud-limited, clipped and gappy material
// cut into odd block sizes.
import { describe, it } from 'vitest';
import { defaultChannelLabels, type Meter, type StreamInfo } from '../../src/analysis/audio.ts';
import { LevelMeter } from '../../src/analysis/levels.ts';
import { TruePeakMeter } from '../../src/analysis/true-peak.ts';
import { LoudnessMeter } from '../../src/analysis/loudness.ts';
import { LevelMeter as ReferenceLevelMeter } from '../helpers/reference-meters/levels.ts';
import { TruePeakMeter as ReferenceTruePeakMeter } from '../helpers/reference-meters/true-peak.ts';
import { LoudnessMeter as ReferenceLoudnessMeter } from '../helpers/reference-meters/loudness.ts';
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
