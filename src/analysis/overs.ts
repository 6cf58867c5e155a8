// Peak overs per channel, merged: overs closer than `mergeFrames` are one event with their count
// and the largest value. Shared by the Annex 2 and the reconstructed peak meters.

import { byStartThenChannel, EventLog, type EventList } from './events.ts';

interface OpenOver {
  startFrame: number;
  lastFrame: number;
  count: number;
  peak: number;
}

export class OverLog {
  private readonly open: (OpenOver | null)[];
  private readonly log: EventLog;

  constructor(
    private readonly kind: 'true_peak_over' | 'reconstructed_over',
    channels: number,
    sampleRate: number,
    private readonly mergeFrames: number,
    maxEvents?: number,
  ) {
    this.open = new Array<OpenOver | null>(channels).fill(null);
    this.log = new EventLog(sampleRate, maxEvents);
  }

  /** An over at `frame` with linear value `peak`. */
  record(channel: number, frame: number, peak: number): void {
    const open = this.open[channel];
    if (open && frame - open.lastFrame <= this.mergeFrames + 1) {
      open.lastFrame = frame;
      open.count++;
      if (peak > open.peak) open.peak = peak;
      return;
    }
    this.close(channel);
    this.open[channel] = { startFrame: frame, lastFrame: frame, count: 1, peak };
  }

  /** Overs at `count` consecutive frames from `startFrame` to `lastFrame` (equal frames allowed
   * where positions clamp at 0), largest value `peak`: the same as recording each in turn when the
   * merge distance is at least 0 (overs a frame apart then always merge); else pass single overs. */
  recordRun(channel: number, startFrame: number, lastFrame: number, count: number, peak: number): void {
    const open = this.open[channel];
    if (open && startFrame - open.lastFrame <= this.mergeFrames + 1) {
      open.lastFrame = lastFrame;
      open.count += count;
      if (peak > open.peak) open.peak = peak;
      return;
    }
    this.close(channel);
    this.open[channel] = { startFrame, lastFrame, count, peak };
  }

  /** A channel's open over (its last frame and largest value so far), if any. */
  openOver(channel: number): Readonly<Pick<OpenOver, 'lastFrame' | 'peak'>> | null {
    return this.open[channel];
  }

  private close(channel: number): void {
    const open = this.open[channel];
    if (!open) return;
    this.log.add({
      kind: this.kind,
      channel,
      startFrame: open.startFrame,
      endFrame: open.lastFrame + 1,
      peakValue: 20 * Math.log10(open.peak),
      count: open.count,
    });
    this.open[channel] = null;
  }

  /** Closes every open over; the kept events by start, then channel, and the total counted. */
  finish(): EventList {
    for (let c = 0; c < this.open.length; c++) this.close(c);
    return this.log.list(byStartThenChannel);
  }
}
