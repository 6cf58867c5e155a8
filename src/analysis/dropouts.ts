// Dropouts: short losses of signal inside programme (a run of digital zero, or a fall to a noise
// floor) in one channel while the others play on, or in all channels at once. No standard defines
// them; the definition and every value below are ours (common practice where marked).
//
// A near-silent run is a maximal run of samples with |x| < threshold (digital zero included); for
// all channels together, of frames whose samples all are. Events span the run, so a programme
// sample below the threshold beside a zero run belongs to it (and gives it a peakValue).
// A run [start, end) is a dropout when
//  1. it lasts minDuration..maxDuration;
//  2. it starts from sound: the loudest sample of the edge window (1 ms) just before it is at
//     least minDropDb above the threshold;
//  3. the waveform was cut, not faded: that edge level is at most maxFadeDb below the loudest
//     sample of the fade window (30 ms) before the edge window;
//  4. the signal resumes: the loudest sample of the edge window from `end` on is again minDropDb
//     above the threshold (so tail silence is never a dropout; head silence fails rule 2);
//  5. a run in one channel is not reported when an all-channel run of at least minDuration starts
//     and ends within the edge window of it: all channels dropped at the same moment, and the
//     all-channel run (channel null) stands for them, once. So a single-channel dropout has another
//     channel sounding inside it, for more than a sample that happened to be quiet at its edge.
// Why these values:
// - 20 dB within 1 ms: a sine that climbs 20 dB above the threshold T within 1 ms of leaving it
//   has a slope of at least 9T per ms at its zero crossing, so it stays below T for under 0.23 ms:
//   zero crossings of any level and frequency never make a 1 ms run. Natural decays (reverb,
//   releases, speech) fall by tens of dB per 100 ms, not per millisecond.
// - 20 dB against the 30 ms before: a linear fade (the steepest usual shape at its end) whose last
//   millisecond still passes rule 2 is about 29 dB below its level 30 ms earlier, whatever its
//   length (at least 22.7 dB measured on over 3000 noise fades of 20-100 ms); fades under about
//   10 ms count as cuts. A cut loses at most 12 dB on programme-like noise and tones (5000 random
//   cuts), 18 dB on a lone 20 Hz sine cut at its zero crossing.
// - Resuming at a sounding level: a hard-cut rest in a surround or LFE channel that fades back in
//   is a mix decision. maxDuration bounds rests: longer losses are the silence meter's regions
//   (>= 2 s there), and it bounds how long finished events wait for their place in the order.
// Hard edits to digital silence and switched test tones (ident breaks, pips) look the same and are
// reported: the waveform alone cannot tell them from a loss.
//
// Streaming: with a minimum of a chunk (32 frames) or more, every run that can matter holds some
// chunk's last frame, so outside runs only those frames are read; inside one, the envelope's
// chunk maxima skip quiet chunks. Shorter minimums skip on the envelope's extremes as silence.ts
// does. All channels are scanned together only in blocks where every channel has a run of at least
// the minimum or one crossing a block edge. Rules 2-3 read a ring of the last 31 ms per channel,
// rule 4 the next block(s).

import type { Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ENVELOPE_CHUNK_FRAMES, EnvelopeBuilder } from './envelope.ts';
import { byStartThenChannel, EventLog, type EventList, type FoundEvent } from './events.ts';
import { amplitudeToDb, dbToAmplitude } from './units.ts';
import { EarmarkError } from '../errors/index.ts';

/** The silence meter's level (ffmpeg silencedetect's, common practice). */
export const DEFAULT_DROPOUT_THRESHOLD_DBFS = -60;
/** 1 ms: shorter gaps are heard as clicks rather than losses (common practice; no standard fixes it). */
export const DEFAULT_DROPOUT_MIN_SECONDS = 0.001;
/** Our choice: longer losses are silence regions (see the header). */
export const DEFAULT_DROPOUT_MAX_SECONDS = 10;
/** "Tens of dB within a millisecond" (our choice, see the header). */
export const DEFAULT_DROPOUT_MIN_DROP_DB = 20;
export const DEFAULT_DROPOUT_MAX_FADE_DB = 20;
/** Windows around a run (our choice, see the header). */
export const DROPOUT_EDGE_SECONDS = 0.001;
export const DROPOUT_FADE_WINDOW_SECONDS = 0.03;

export interface DropoutOptions {
  minDurationSeconds?: number;
  maxDurationSeconds?: number;
  /** Near silence: |x| below this. */
  thresholdDbfs?: number;
  /** The edge windows before and after a run must reach this far above the threshold. */
  minDropDb?: number;
  /** The edge level may lie at most this far below the fade window's: more is a fade. */
  maxFadeDb?: number;
  maxEvents?: number;
}

/** Events: 'dropout', channel null for all channels; peakValue = loudest sample in dBFS, absent for digital zero; by start, then channel. */
export interface DropoutResult extends EventList {
  minDurationSeconds: number;
  channels: Array<{ channel: number; dropouts: number; droppedSeconds: number }>;
  /** all-channel dropouts */
  all: { dropouts: number; droppedSeconds: number };
}

/** A run that passed rules 1-3, waiting for the frames after it (rule 4). */
interface Candidate {
  slot: number;
  startFrame: number;
  endFrame: number;
  peak: number;
  resumeMax: number;
  /** Next frame of the window after the run to read; the window ends at `until`. */
  next: number;
  until: number;
  /** Matched by an all-channel run (rule 5). */
  covered: boolean;
}

interface Span {
  start: number;
  end: number;
}

// Verdict of rules 2-3 on an open run.
const UNJUDGED = 0;
const ABRUPT = 1;
const GRADUAL = 2;

export class DropoutMeter implements Meter<DropoutResult> {
  private readonly n: number;
  private readonly threshold: number;
  private readonly sounding: number;
  private readonly fadeRatio: number;
  private readonly minDurationSeconds: number;
  private readonly minFrames: number;
  private readonly maxFrames: number;
  private readonly edgeFrames: number;
  private readonly log: EventLog;
  // Per slot: channels 0..n-1, index n = all channels. Open run start (-1 = none), its peak |x|, verdict.
  private readonly runStart: Float64Array;
  private readonly runPeak: Float64Array;
  private readonly verdict: Int8Array;
  private readonly dropouts: Float64Array;
  private readonly droppedFrames: Float64Array;
  /** The last ringFrames samples per channel, frame f at f % ringFrames. */
  private readonly ring: Float32Array[];
  private readonly ringFrames: number;
  private candidates: Candidate[] = [];
  /** All-channel runs of at least the minimum that channel runs ending now could still match (rule 5). */
  private recentAll: Span[] = [];
  /** Finished events whose place in the start order is not settled yet. */
  private held: FoundEvent[] = [];
  private frames = 0;
  private finished: DropoutResult | null = null;
  private readonly envelopes = new EnvelopeBuilder();

  constructor(
    private readonly info: StreamInfo,
    options: DropoutOptions = {},
  ) {
    const thresholdDbfs = options.thresholdDbfs ?? DEFAULT_DROPOUT_THRESHOLD_DBFS;
    const minDropDb = options.minDropDb ?? DEFAULT_DROPOUT_MIN_DROP_DB;
    const maxFadeDb = options.maxFadeDb ?? DEFAULT_DROPOUT_MAX_FADE_DB;
    const maxSeconds = options.maxDurationSeconds ?? DEFAULT_DROPOUT_MAX_SECONDS;
    this.minDurationSeconds = options.minDurationSeconds ?? DEFAULT_DROPOUT_MIN_SECONDS;
    if (
      ![thresholdDbfs, minDropDb, maxFadeDb, maxSeconds].every(Number.isFinite) ||
      !(this.minDurationSeconds >= 0) ||
      !(maxSeconds >= this.minDurationSeconds)
    ) {
      throw new EarmarkError(
        'invalid_argument',
        'Dropout levels must be finite and 0 <= minDurationSeconds <= maxDurationSeconds (finite)',
        {
          field: 'dropouts',
        },
      );
    }
    const fs = info.sampleRate;
    this.n = info.channels;
    this.threshold = dbToAmplitude(thresholdDbfs);
    this.sounding = dbToAmplitude(thresholdDbfs + minDropDb);
    this.fadeRatio = dbToAmplitude(maxFadeDb);
    this.minFrames = Math.max(1, Math.round(this.minDurationSeconds * fs));
    this.maxFrames = Math.round(maxSeconds * fs);
    this.edgeFrames = Math.max(1, Math.round(DROPOUT_EDGE_SECONDS * fs));
    this.ringFrames = this.edgeFrames + Math.max(1, Math.round(DROPOUT_FADE_WINDOW_SECONDS * fs));
    this.log = new EventLog(fs, options.maxEvents);
    const slots = this.n + 1;
    this.runStart = new Float64Array(slots).fill(-1);
    this.runPeak = new Float64Array(slots);
    this.verdict = new Int8Array(slots);
    this.dropouts = new Float64Array(slots);
    this.droppedFrames = new Float64Array(slots);
    this.ring = Array.from({ length: this.n }, () => new Float32Array(this.ringFrames));
  }

  push(block: PcmBlock): void {
    const frames = block.frames;
    if (frames === 0) return;
    const base = this.frames;
    // Long minimums use the envelope only to skip quiet chunks inside runs, and do without it
    // when it is not attached (runs are rare); short ones need it to skip anything.
    const envelope = this.minFrames >= ENVELOPE_CHUNK_FRAMES ? block.envelope : this.envelopes.of(block);
    for (const candidate of this.candidates) this.readAfter(candidate, block, base);
    // Mono: the channel's runs are the all-channel runs, which rule 5 reports instead.
    let allChannels = true;
    if (this.n > 1) {
      for (let c = 0; c < this.n; c++) {
        if (
          !this.scan(
            c,
            [block.channelData[c]],
            envelope && [envelope.maxAbs[c]],
            envelope && [envelope.minAbs[c]],
            block,
            base,
          )
        )
          allChannels = false;
      }
    }
    // An all-channel run that can matter lies inside a long or block-crossing run of every channel.
    if (allChannels) this.scan(this.n, block.channelData, envelope?.maxAbs, envelope?.minAbs, block, base);
    // Rules 2-3 read the frames before a run: judge open runs while the ring still holds them.
    for (let slot = 0; slot <= this.n; slot++) {
      if (this.runStart[slot] >= 0 && this.verdict[slot] === UNJUDGED)
        this.judgeStart(slot, this.runStart[slot], block, base);
    }
    // Keep the block's last frames: frame f at f % ringFrames, in at most two copies.
    const from = frames - Math.min(frames, this.ringFrames);
    const at = (base + from) % this.ringFrames;
    const split = from + Math.min(frames - from, this.ringFrames - at);
    for (let c = 0; c < this.n; c++) {
      const x = block.channelData[c];
      this.ring[c].set(x.subarray(from, split), at);
      this.ring[c].set(x.subarray(split, frames), 0);
    }
    this.frames = base + frames;
    // Channel runs ending from now on lie an edge window or more past these.
    if (this.recentAll.length > 0)
      this.recentAll = this.recentAll.filter((span) => this.frames - span.end < this.edgeFrames);
    this.decideReady(false);
    this.flush(false);
  }

  result(): DropoutResult {
    if (this.finished) return this.finished;
    // Runs still open never resumed; a window cut short by the end decides on what it has.
    this.decideReady(true);
    this.flush(true);
    const fs = this.info.sampleRate;
    const channels: DropoutResult['channels'] = [];
    for (let c = 0; c < this.n; c++) {
      channels.push({ channel: c, dropouts: this.dropouts[c], droppedSeconds: this.droppedFrames[c] / fs });
    }
    this.finished = {
      minDurationSeconds: this.minDurationSeconds,
      channels,
      all: { dropouts: this.dropouts[this.n], droppedSeconds: this.droppedFrames[this.n] / fs },
      ...this.log.list(),
    };
    return this.finished;
  }

  /**
   * One slot's runs through a block: a channel (xs holds its samples) or all channels (xs holds
   * every channel; a frame's level is its loudest sample, a chunk's bounds come from every channel).
   * Returns whether a run of at least the minimum, or one open at either end of the block, was seen.
   */
  private scan(
    slot: number,
    xs: readonly Float32Array[],
    maxAbs: readonly Float32Array[] | undefined,
    minAbs: readonly Float32Array[] | undefined,
    block: PcmBlock,
    base: number,
  ): boolean {
    const frames = block.frames;
    const thr = this.threshold;
    const minFrames = this.minFrames;
    let start = this.runStart[slot];
    let peak = this.runPeak[slot];
    let long = start >= 0;
    if (minFrames >= ENVELOPE_CHUNK_FRAMES) {
      const x0 = xs[0];
      const single = xs.length === 1;
      // A run of a chunk's length or more holds some chunk's last frame (the block's last frame
      // ends its last chunk): runs open only there, so a chunk without an open run costs one frame.
      for (let k = 0, from = 0; from < frames; k++, from += ENVELOPE_CHUNK_FRAMES) {
        const to = Math.min(from + ENVELOPE_CHUNK_FRAMES, frames);
        let i = from;
        if (start >= 0) {
          const hi = maxAbs ? chunkLevel(maxAbs, k) : thr;
          if (hi < thr) {
            if (hi > peak) peak = hi;
            continue;
          }
          for (; i < to; i++) {
            const a = frameLevel(xs, i);
            if (a >= thr) break;
            if (a > peak) peak = a;
          }
          if (i === to) continue; // a quiet chunk, read without an envelope
          if (base + i - start >= minFrames) {
            this.closeRun(slot, start, base + i, peak, block, base);
            long = true;
          }
          start = -1;
          i++;
        }
        const last = to - 1;
        if (i <= last && Math.abs(x0[last]) < thr && (single || isQuiet(xs, last, thr))) {
          let j = last,
            tail = frameLevel(xs, j);
          for (; j > i; j--) {
            const a = frameLevel(xs, j - 1);
            if (a >= thr) break;
            if (a > tail) tail = a;
          }
          start = base + j;
          peak = tail;
          this.verdict[slot] = UNJUDGED;
        }
      }
    } else {
      // Short minimum: scan every chunk that may start or end a run, sample by sample (push
      // built the envelope).
      for (let k = 0, from = 0; from < frames; k++, from += ENVELOPE_CHUNK_FRAMES) {
        const hi = chunkLevel(maxAbs!, k);
        if (start < 0 ? chunkLevel(minAbs!, k) >= thr : hi < thr) {
          if (start >= 0 && hi > peak) peak = hi;
          continue;
        }
        const to = Math.min(from + ENVELOPE_CHUNK_FRAMES, frames);
        for (let i = from; i < to; i++) {
          const a = frameLevel(xs, i);
          if (a < thr) {
            if (start < 0) {
              start = base + i;
              peak = 0;
              this.verdict[slot] = UNJUDGED;
            }
            if (a > peak) peak = a;
          } else if (start >= 0) {
            if (base + i - start >= minFrames) {
              this.closeRun(slot, start, base + i, peak, block, base);
              long = true;
            }
            start = -1;
          }
        }
      }
    }
    this.runStart[slot] = start;
    this.runPeak[slot] = peak;
    return long || start >= 0;
  }

  private closeRun(slot: number, start: number, end: number, peak: number, block: PcmBlock, base: number): void {
    if (end - start < this.minFrames) return;
    // Rule 5. A matching channel run ends with the all-channel run or up to an edge window later,
    // and channels are scanned before the all-channel slot: check both ways.
    if (slot === this.n) {
      const span = { start, end };
      for (const c of this.candidates)
        if (c.slot < this.n && this.matches(span, c.startFrame, c.endFrame)) c.covered = true;
      this.recentAll.push(span);
    }
    if (end - start > this.maxFrames) return;
    if (this.verdict[slot] === UNJUDGED) this.judgeStart(slot, start, block, base);
    if (this.verdict[slot] !== ABRUPT) return;
    const candidate: Candidate = {
      slot,
      startFrame: start,
      endFrame: end,
      peak,
      resumeMax: 0,
      next: end,
      until: end + this.edgeFrames,
      covered: slot < this.n && this.recentAll.some((span) => this.matches(span, start, end)),
    };
    this.candidates.push(candidate);
    this.readAfter(candidate, block, base);
  }

  /** Rule 5: the all-channel run starts and ends within an edge window of the channel run [start, end). */
  private matches(span: Span, start: number, end: number): boolean {
    return (
      span.start >= start && span.start - start < this.edgeFrames && span.end <= end && end - span.end < this.edgeFrames
    );
  }

  /** Rules 2 and 3 from the frames before the run (this block and the ring). */
  private judgeStart(slot: number, start: number, block: PcmBlock, base: number): void {
    const edge = this.levelIn(slot, start - this.edgeFrames, start, block, base);
    const before = this.levelIn(slot, start - this.ringFrames, start - this.edgeFrames, block, base);
    this.verdict[slot] = edge >= this.sounding && !(before > edge * this.fadeRatio) ? ABRUPT : GRADUAL;
  }

  /** Loudest |x| of the slot's channels over frames [from, to), from at most ringFrames before this block. */
  private levelIn(slot: number, from: number, to: number, block: PcmBlock, base: number): number {
    let level = 0;
    const first = slot === this.n ? 0 : slot;
    const last = slot === this.n ? this.n : slot + 1;
    for (let c = first; c < last; c++) {
      const r = this.ring[c];
      const x = block.channelData[c];
      for (let f = Math.max(0, from); f < to; f++) {
        level = Math.max(level, Math.abs(f >= base ? x[f - base] : r[f % this.ringFrames]));
      }
    }
    return level;
  }

  /** Rule 4: reads the part of the window after the run that this block holds. */
  private readAfter(candidate: Candidate, block: PcmBlock, base: number): void {
    const from = Math.max(candidate.next, base);
    const to = Math.min(candidate.until, base + block.frames);
    if (from >= to) return;
    candidate.resumeMax = Math.max(candidate.resumeMax, this.levelIn(candidate.slot, from, to, block, base));
    candidate.next = to;
  }

  private decideReady(final: boolean): void {
    if (this.candidates.length === 0) return;
    const waiting: Candidate[] = [];
    for (const c of this.candidates) {
      if (c.next < c.until && !final) {
        waiting.push(c);
        continue;
      }
      if (c.covered || !(c.resumeMax >= this.sounding)) continue;
      this.dropouts[c.slot]++;
      this.droppedFrames[c.slot] += c.endFrame - c.startFrame;
      const event: FoundEvent = {
        kind: 'dropout',
        channel: c.slot === this.n ? null : c.slot,
        startFrame: c.startFrame,
        endFrame: c.endFrame,
      };
      const peakDbfs = amplitudeToDb(c.peak);
      if (peakDbfs !== null) event.peakValue = peakDbfs;
      this.held.push(event);
    }
    this.candidates = waiting;
  }

  /** Logs held events that nothing still open can precede, so the order (and what the cap keeps) is the same however the stream was cut. */
  private flush(final: boolean): void {
    if (this.held.length === 0) return;
    let horizon = Infinity;
    if (!final) {
      for (let slot = 0; slot <= this.n; slot++) {
        const start = this.runStart[slot];
        if (start >= 0 && this.verdict[slot] === ABRUPT && this.frames - start <= this.maxFrames)
          horizon = Math.min(horizon, start);
      }
      for (const c of this.candidates) horizon = Math.min(horizon, c.startFrame);
    }
    this.held.sort(byStartThenChannel);
    let k = 0;
    while (k < this.held.length && this.held[k].startFrame < horizon) this.log.add(this.held[k++]);
    this.held.splice(0, k);
  }
}

/** The loudest |x| of a frame over the given channels. */
function frameLevel(xs: readonly Float32Array[], i: number): number {
  let a = 0;
  for (let c = 0; c < xs.length; c++) a = Math.max(a, Math.abs(xs[c][i]));
  return a;
}

/** Every channel below the threshold at frame i (the first loud one ends the test). */
function isQuiet(xs: readonly Float32Array[], i: number, thr: number): boolean {
  for (let c = 0; c < xs.length; c++) if (Math.abs(xs[c][i]) >= thr) return false;
  return true;
}

/** Per chunk k, the largest of the channels' chunk values (for the minima: a bound on every frame's level). */
function chunkLevel(chunks: readonly Float32Array[], k: number): number {
  let v = 0;
  for (let c = 0; c < chunks.length; c++) v = Math.max(v, chunks[c][k]);
  return v;
}
