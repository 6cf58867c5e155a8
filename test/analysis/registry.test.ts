// The meter registry (runner.ts METERS): each descriptor says truly whether its meter reads the
// block envelope and which kinds of event it lists, and every event list keeps the same contract.
import { describe, expect, it } from 'vitest';
import type { PcmBlock, StreamInfo } from '../../src/analysis/audio.ts';
import { EnvelopeBuilder } from '../../src/analysis/envelope.ts';
import { isEventList, METER_NAMES, METERS, type AnalysisOptions } from '../../src/analysis/runner.ts';
import { cut, SAMPLE_RATE, testSignals } from '../helpers/test-signals.ts';

const info: StreamInfo = { sampleRate: SAMPLE_RATE, channels: 2, channelLabels: ['L', 'R'] };

/** Limits low enough that every meter finds events in the test signals, and caps that cut them. */
function eventfulOptions(maxEvents: number): AnalysisOptions {
  return {
    loudness: { momentaryLimitLufs: -40, shortTermLimitLufs: -40, maxEvents },
    truePeak: { overCeilingDbtp: -20, maxEvents },
    reconstructedPeak: { overCeilingDbtp: -20, maxEvents },
    clipping: { thresholdDbfs: -20, minRunSamples: 1, maxEvents },
    silence: { thresholdDbfs: -40, minDurationSeconds: 0.01, maxEvents },
    dropouts: { maxEvents },
    channelRelations: { phaseThreshold: 0.5, maxEvents },
    downmix: { enabled: true, maxEvents },
  };
}

describe('meter registry', () => {
  it("gives each meter that lists events its own place among the document's counts", () => {
    const orders = METER_NAMES.flatMap((name) => METERS[name].events?.countOrder ?? []);
    expect(new Set(orders).size).toBe(orders.length);
  });

  it('each descriptor says whether its meter reads the block envelope', () => {
    const { programme } = testSignals(2, 1);
    const builder = new EnvelopeBuilder();
    for (const name of METER_NAMES) {
      let read = false;
      const meter = METERS[name].create(info, {});
      for (const block of cut(programme, [16_384])) {
        const shared: PcmBlock = {
          ...block,
          get envelope() {
            read = true;
            return builder.build(block);
          },
        };
        meter.push(shared);
      }
      meter.result();
      expect(read, name).toBe(METERS[name].readsEnvelope);
    }
  });

  it.each([10_000, 1])('lists only the declared kinds, counting every event found (cap %i)', (maxEvents) => {
    const signals = testSignals(2, 8);
    // R a polarity-inverted copy of L: the relation meter's pair events too.
    const inverted = [signals.programme[0], signals.programme[0].map((v) => -v)];
    const found = new Set<string>();
    // The downmix meter folds 5.1 down; its clip runs need a surround layout.
    const surround: StreamInfo = { ...info, channels: 6, channelLabels: ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'] };
    const runs = [
      ...[...Object.values(signals), inverted].map((channels) => ({ info, channels, names: METER_NAMES })),
      { info: surround, channels: testSignals(6, 8).clipped, names: ['downmix' as const] },
    ];
    for (const { info, channels, names } of runs) {
      for (const name of names) {
        const meter = METERS[name].create(info, eventfulOptions(maxEvents));
        for (const block of cut(channels, [65_536])) meter.push(block);
        const result = meter.result();
        const kinds: readonly string[] = METERS[name].events?.kinds ?? [];
        expect(isEventList(result), name).toBe(kinds.length > 0);
        if (!isEventList(result)) continue;
        for (const event of result.events) {
          expect(kinds, name).toContain(event.kind);
          found.add(event.kind);
        }
        expect(result.events.length, name).toBeLessThanOrEqual(Math.min(maxEvents, result.eventsTotal));
        expect(result.eventsTruncated, name).toBe(result.eventsTotal > result.events.length);
      }
    }
    // Every meter that lists events found some, so the kind checks above were not vacuous.
    for (const name of METER_NAMES) {
      const kinds: readonly string[] = METERS[name].events?.kinds ?? [];
      if (kinds.length > 0)
        expect(
          kinds.some((k) => found.has(k)),
          name,
        ).toBe(true);
    }
  });
});
