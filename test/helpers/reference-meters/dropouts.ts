// The dropout rules as a meter over the whole stream, in the meter's result shape, for the
// block-cut checks of test/analysis/dropouts.test.ts and the side-by-side timing of bench/meters.ts:
// the plain loops of run-reference.ts, run once the stream has ended.
import type { Meter, PcmBlock, StreamInfo } from '../../../src/analysis/audio.ts';
import type { DropoutOptions, DropoutResult } from '../../../src/analysis/dropouts.ts';
import { DROPOUT_DEFAULTS, referenceDropouts } from './run-reference.ts';

export class DropoutMeter implements Meter<DropoutResult> {
  private readonly blocks: Float32Array[][] = [];

  constructor(
    private readonly info: StreamInfo,
    private readonly options: DropoutOptions = {},
  ) {}

  push(block: PcmBlock): void {
    this.blocks.push(block.channelData.map((x) => x.slice(0, block.frames)));
  }

  result(): DropoutResult {
    const o = this.options,
      rate = this.info.sampleRate;
    const channels = Array.from({ length: this.info.channels }, (_, c) => {
      const out = new Float32Array(this.blocks.reduce((n, b) => n + b[c].length, 0));
      this.blocks.reduce((at, b) => {
        out.set(b[c], at);
        return at + b[c].length;
      }, 0);
      return out;
    });
    const found = referenceDropouts(channels, rate, {
      minSeconds: o.minDurationSeconds ?? DROPOUT_DEFAULTS.minSeconds,
      maxSeconds: o.maxDurationSeconds ?? DROPOUT_DEFAULTS.maxSeconds,
      thresholdDbfs: o.thresholdDbfs ?? DROPOUT_DEFAULTS.thresholdDbfs,
      minDropDb: o.minDropDb ?? DROPOUT_DEFAULTS.minDropDb,
      maxFadeDb: o.maxFadeDb ?? DROPOUT_DEFAULTS.maxFadeDb,
    }).sort((a, b) => a.startFrame - b.startFrame || (a.channel ?? -1) - (b.channel ?? -1));
    const totals = (channel: number | null) => {
      const mine = found.filter((e) => e.channel === channel);
      return { dropouts: mine.length, droppedSeconds: mine.reduce((n, e) => n + e.endFrame - e.startFrame, 0) / rate };
    };
    // Events are kept in start order up to maxEvents (10 000 by default); the count goes on.
    const kept = found.slice(0, o.maxEvents ?? 10_000);
    return {
      minDurationSeconds: o.minDurationSeconds ?? DROPOUT_DEFAULTS.minSeconds,
      channels: channels.map((_, c) => ({ channel: c, ...totals(c) })),
      all: totals(null),
      events: kept.map((e) => ({
        kind: 'dropout' as const,
        ...e,
        startSeconds: e.startFrame / rate,
        endSeconds: e.endFrame / rate,
      })),
      eventsTotal: found.length,
      eventsByKind: found.length ? { dropout: found.length } : {},
      eventsTruncated: found.length > kept.length,
    };
  }
}
