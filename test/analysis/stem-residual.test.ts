// The stem residual meter: the same result whatever the block cuts (it streams), spans merged
// from windows, and the edge cases of silence.

import { describe, expect, it } from 'vitest';
import { StemResidualMeter, type ResidualResult } from '../../src/analysis/stem-residual.ts';
import { seededRandom } from '../../src/selftest/signals.ts';
import { BLOCK_CUTS, expectClose } from '../helpers/test-signals.ts';

const FRAMES = 48_000 * 3;

function signals() {
  const random = seededRandom(11);
  const stems = [0, 1].map(() => [0, 1].map(() => Float32Array.from({ length: FRAMES }, () => (random() - 0.5) * 0.5)));
  const mix = [0, 1].map((c) => Float32Array.from({ length: FRAMES }, (_, i) => stems[0][c][i] + stems[1][c][i]));
  // A glitch: one stem's left channel off by 0.01 for 1000 samples from 1.5 s.
  for (let i = 72_000; i < 73_000; i++) stems[1][0][i] += 0.01;
  return { stems, mix };
}

function run(sizes: number[]): ResidualResult {
  const { stems, mix } = signals();
  const meter = new StemResidualMeter(2, 4800, FRAMES);
  for (let start = 0, k = 0; start < FRAMES; k++) {
    const end = Math.min(FRAMES, start + sizes[k % sizes.length]);
    const part = (channels: Float32Array[]) => channels.map((x) => x.subarray(start, end));
    meter.push(
      stems.map((s) => part(s)),
      part(mix),
      end - start,
    );
    start = end;
  }
  return meter.result(-60);
}

describe('StemResidualMeter', () => {
  it('gives the same result for any block cuts (to 1e-9: only the grouping of the sums differs)', () => {
    const [first, ...rest] = BLOCK_CUTS.map(run);
    for (const other of rest) expectClose(other, first, 1e-9);
  });

  it('locates a glitch in one window on its channel with its level and peak', () => {
    const r = run([65_536]);
    expect(r.spansTotal).toBe(1);
    expect(r.spans[0]).toMatchObject({ startFrame: 72_000, endFrame: 76_800, channel: 0, windows: 1 });
    // The mix sums two independent stems of uniform noise, variance 0.25/12 each (closed form),
    // so within sampling error the mix's mean square is 2 x 0.25/12; the residual 0.01^2 over
    // 1000 of 4800 samples (float32 rounding of the mix adds far less).
    const mixMeanSquare = (2 * 0.25) / 12;
    expect(r.spans[0].worstRelativeDb ?? 0).toBeCloseTo(10 * Math.log10(((1000 / 4800) * 1e-4) / mixMeanSquare), 0);
    expect(r.channels[0].residualPeakDbfs ?? 0).toBeCloseTo(-40, 1);
    expect(r.channels[0].residualPeakFrame).toBeGreaterThanOrEqual(72_000);
    expect(r.channels[0].residualPeakFrame).toBeLessThan(73_000);
    expect(r.withinTolerance).toBe(false);
  });

  it('silence: a silent residual meets any tolerance, any residual against a silent mix breaks it', () => {
    const zeros = [new Float32Array(100)];
    const silent = new StemResidualMeter(1, 10);
    silent.push([zeros], zeros, 100);
    const quiet = silent.result(-200);
    expect(quiet).toMatchObject({
      residualRelativeDb: null,
      residualPeakDbfs: null,
      mixRmsDbfs: null,
      withinTolerance: true,
    });
    const against = new StemResidualMeter(1, 10);
    const tiny = [Float32Array.from({ length: 100 }, (_, i) => (i === 55 ? 1e-6 : 0))];
    against.push([tiny], zeros, 100);
    const broken = against.result(-60);
    expect(broken.withinTolerance).toBe(false);
    expect(broken.residualRelativeDb).toBeNull();
    expect(broken.spans).toEqual([{ startFrame: 50, endFrame: 60, channel: 0, worstRelativeDb: null, windows: 1 }]);
  });
});
