// Reference for the equivalence tests: the dropout rules of src/analysis/dropouts.ts (see its
// header) sample by sample, with no chunk skipping, a history of every sample, rule 5 against every
// all-channel run, and the events sorted once at the end. Do not optimise.

import type { Meter, PcmBlock, StreamInfo } from '../../../src/analysis/audio.ts';
import { EventLog, type AnalysisEvent } from '../../../src/analysis/events.ts';
import { amplitudeToDb } from '../../../src/analysis/levels.ts';
import {
  DEFAULT_DROPOUT_MAX_FADE_DB, DEFAULT_DROPOUT_MAX_SECONDS, DEFAULT_DROPOUT_MIN_DROP_DB, DEFAULT_DROPOUT_MIN_SECONDS,
  DEFAULT_DROPOUT_THRESHOLD_DBFS, DROPOUT_EDGE_SECONDS, DROPOUT_FADE_WINDOW_SECONDS,
  type DropoutOptions, type DropoutResult,
} from '../../../src/analysis/dropouts.ts';

interface Run {
  slot: number;
  start: number;
  end: number;
  peak: number;
  edge: number;
  before: number;
  after: number;
}

export class DropoutMeter implements Meter<DropoutResult> {
  private readonly n: number;
  private readonly threshold: number;
  private readonly sounding: number;
  private readonly fadeRatio: number;
  private readonly minDurationSeconds: number;
  private readonly minFrames: number;
  private readonly maxFrames: number;
  private readonly edgeFrames: number;
  private readonly fadeFrames: number;
  private readonly maxEvents: number | undefined;
  /** Every sample so far, per channel. */
  private readonly history: number[][];
  /** Open run per slot (channels, then all channels), or null. */
  private readonly open: (Run | null)[];
  /** Closed runs still reading the window after them, and those done. */
  private awaiting: Run[] = [];
  private readonly closed: Run[] = [];
  private frames = 0;

  constructor(private readonly info: StreamInfo, options: DropoutOptions = {}) {
    const thresholdDbfs = options.thresholdDbfs ?? DEFAULT_DROPOUT_THRESHOLD_DBFS;
    const fs = info.sampleRate;
    this.n = info.channels;
    this.threshold = 10 ** (thresholdDbfs / 20);
    this.sounding = 10 ** ((thresholdDbfs + (options.minDropDb ?? DEFAULT_DROPOUT_MIN_DROP_DB)) / 20);
    this.fadeRatio = 10 ** ((options.maxFadeDb ?? DEFAULT_DROPOUT_MAX_FADE_DB) / 20);
    this.minDurationSeconds = options.minDurationSeconds ?? DEFAULT_DROPOUT_MIN_SECONDS;
    this.minFrames = Math.max(1, Math.round(this.minDurationSeconds * fs));
    this.maxFrames = Math.round((options.maxDurationSeconds ?? DEFAULT_DROPOUT_MAX_SECONDS) * fs);
    this.edgeFrames = Math.max(1, Math.round(DROPOUT_EDGE_SECONDS * fs));
    this.fadeFrames = Math.max(1, Math.round(DROPOUT_FADE_WINDOW_SECONDS * fs));
    this.maxEvents = options.maxEvents;
    this.history = Array.from({ length: this.n }, () => []);
    this.open = new Array(this.n + 1).fill(null);
  }

  push(block: PcmBlock): void {
    for (let i = 0; i < block.frames; i++) {
      const f = this.frames;
      const levels: number[] = [];
      for (let c = 0; c < this.n; c++) {
        levels.push(Math.abs(block.channelData[c][i]));
        this.history[c].push(block.channelData[c][i]);
      }
      // Windows after closed runs.
      for (const run of this.awaiting) {
        if (f < run.end + this.edgeFrames) run.after = Math.max(run.after, this.slotLevel(run.slot, levels));
        else this.closed.push(run);
      }
      this.awaiting = this.awaiting.filter((run) => f < run.end + this.edgeFrames);
      for (let slot = 0; slot <= this.n; slot++) {
        const level = this.slotLevel(slot, levels);
        let run = this.open[slot];
        if (level < this.threshold) {
          if (!run) {
            run = {
              slot, start: f, end: -1, peak: 0, after: 0,
              edge: this.levelBefore(slot, f - this.edgeFrames, f),
              before: this.levelBefore(slot, f - this.edgeFrames - this.fadeFrames, f - this.edgeFrames),
            };
            this.open[slot] = run;
          }
          run.peak = Math.max(run.peak, level);
        } else if (run) {
          run.end = f;
          run.after = level;
          this.awaiting.push(run);
          this.open[slot] = null;
        }
      }
      this.frames++;
    }
  }

  result(): DropoutResult {
    const fs = this.info.sampleRate;
    this.closed.push(...this.awaiting);
    this.awaiting = [];
    const dropouts = new Array(this.n + 1).fill(0);
    const dropped = new Array(this.n + 1).fill(0);
    // Rule 5: all channels dropped together (within an edge window at both ends): the all-channel run stands for them.
    const allRuns = this.closed.filter((run) => run.slot === this.n && run.end - run.start >= this.minFrames);
    const covered = (run: Run) => allRuns.some((all) => all.start >= run.start && all.start - run.start < this.edgeFrames
      && all.end <= run.end && run.end - all.end < this.edgeFrames);
    const events: Omit<AnalysisEvent, 'startSeconds' | 'endSeconds'>[] = [];
    for (const run of this.closed) {
      const length = run.end - run.start;
      const isDropout = length >= this.minFrames && length <= this.maxFrames
        && run.edge >= this.sounding && !(run.before > run.edge * this.fadeRatio)
        && run.after >= this.sounding
        && (run.slot === this.n || !covered(run));
      if (!isDropout) continue;
      dropouts[run.slot]++;
      dropped[run.slot] += length;
      const event: Omit<AnalysisEvent, 'startSeconds' | 'endSeconds'> = {
        kind: 'dropout', channel: run.slot === this.n ? null : run.slot, startFrame: run.start, endFrame: run.end,
      };
      const peakDbfs = amplitudeToDb(run.peak);
      if (peakDbfs !== null) event.peakValue = peakDbfs;
      events.push(event);
    }
    events.sort((a, b) => a.startFrame - b.startFrame || (a.channel ?? -1) - (b.channel ?? -1));
    const log = new EventLog(fs, this.maxEvents);
    for (const event of events) log.add(event);
    return {
      minDurationSeconds: this.minDurationSeconds,
      channels: Array.from({ length: this.n }, (_, c) => ({ channel: c, dropouts: dropouts[c], droppedSeconds: dropped[c] / fs })),
      all: { dropouts: dropouts[this.n], droppedSeconds: dropped[this.n] / fs },
      events: log.events,
      eventsTotal: log.total,
      eventsTruncated: log.truncated,
    };
  }

  private slotLevel(slot: number, levels: number[]): number {
    return slot < this.n ? levels[slot] : Math.max(...levels);
  }

  private levelBefore(slot: number, from: number, to: number): number {
    let level = 0;
    for (let f = Math.max(0, from); f < to; f++) {
      for (let c = 0; c < this.n; c++) {
        if (slot === this.n || slot === c) level = Math.max(level, Math.abs(this.history[c][f]));
      }
    }
    return level;
  }
}
