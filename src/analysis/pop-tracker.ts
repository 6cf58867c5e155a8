// The last isolated sine burst of the stream (a tail sync pop): a burst of at most maxFrames,
// with all-channel silence of at least isolationFrames before it and after it (or the end of the
// stream after it). Chunks come from the block envelope, so silence and long sound cost one
// comparison per channel and chunk; only a burst that may be a pop is read sample by sample.
// Memory is bounded: one candidate and the last pop are kept, whatever the stream holds.

import type { PcmBlock } from './audio.ts';
import { type BlockEnvelope, ENVELOPE_CHUNK_FRAMES } from './envelope.ts';
import { accumulate, CrossingTrigger, type BurstReading, sineBurst, ToneSums } from './tone-stats.ts';

export interface FoundPop extends BurstReading {
  startFrame: number;
  endFrame: number;
  channels: number[];
}

/** Its channels, and the reading of the loudest of them. */
export function popOf(sums: readonly ToneSums[], startFrame: number, endFrame: number, rate: number): FoundPop | null {
  const channels: number[] = [];
  let loudest = -1;
  for (let c = 0; c < sums.length; c++) {
    if (sums[c].firstLoud < 0) continue;
    channels.push(c);
    if (loudest < 0 || sums[c].sumSquares > sums[loudest].sumSquares) loudest = c;
  }
  if (loudest < 0) return null;
  const reading = sineBurst(sums[loudest], endFrame - startFrame, rate);
  return reading && { ...reading, startFrame, endFrame, channels };
}

export class TailPopTracker {
  private readonly sums: ToneSums[];
  private readonly triggers: CrossingTrigger[];
  /** Where the current all-channel silence began; -1 while something sounds. */
  private quietSince: number;
  private candidate = false;
  private candidateStart = 0;
  private last: FoundPop | null = null;
  /** Where the silence before the candidate and before the last pop began (the programme's end for a tail pop). */
  private candidateAfter = 0;
  private lastAfter = 0;

  constructor(
    private readonly channels: number,
    private readonly sampleRate: number,
    private readonly threshold: number,
    private readonly maxFrames: number,
    private readonly isolationFrames: number,
  ) {
    this.sums = Array.from({ length: channels }, () => new ToneSums());
    this.triggers = Array.from({ length: channels }, () => new CrossingTrigger(threshold));
    // The stream starts as if after a long silence.
    this.quietSince = -isolationFrames;
  }

  push(block: PcmBlock, envelope: BlockEnvelope, base: number): void {
    const thr = this.threshold;
    const n = this.channels;
    for (let k = 0, from = 0; from < block.frames; k++, from += ENVELOPE_CHUNK_FRAMES) {
      let loud = false;
      for (let c = 0; c < n; c++) if (envelope.maxAbs[c][k] >= thr) loud = true;
      const at = base + from;
      if (loud) {
        if (!this.candidate && this.quietSince >= 0 && at - this.quietSince >= this.isolationFrames) this.open(at);
        else if (!this.candidate && this.quietSince >= 0) this.last = null;
        this.quietSince = -1;
      } else if (this.quietSince < 0) this.quietSince = at;
      if (!this.candidate) continue;
      const to = Math.min(from + ENVELOPE_CHUNK_FRAMES, block.frames);
      for (let c = 0; c < n; c++) accumulate(block.channelData[c], from, to, base, thr, this.triggers[c], this.sums[c]);
      // Sounding past the longest pop (a chunk of slack; close() checks the exact length): programme.
      if (loud && base + to - this.candidateStart > this.maxFrames + ENVELOPE_CHUNK_FRAMES) this.drop();
      else if (!loud && base + to - this.quietSince >= this.isolationFrames) this.close();
    }
  }

  private open(at: number): void {
    this.candidate = true;
    this.candidateAfter = this.quietSince;
    this.candidateStart = at;
    for (let c = 0; c < this.channels; c++) {
      this.sums[c].reset();
      this.triggers[c].previous = 0;
      this.triggers[c].armed = false;
    }
  }

  private firstLoud(): number {
    let first = -1;
    for (const s of this.sums) if (s.firstLoud >= 0 && (first < 0 || s.firstLoud < first)) first = s.firstLoud;
    return first;
  }

  private lastLoud(): number {
    let last = -1;
    for (const s of this.sums) if (s.lastLoud > last) last = s.lastLoud;
    return last;
  }

  private drop(): void {
    this.candidate = false;
    this.last = null;
  }

  private close(): void {
    this.candidate = false;
    const start = this.firstLoud();
    const end = this.lastLoud() + 1;
    this.last = start >= 0 && end - start <= this.maxFrames ? popOf(this.sums, start, end, this.sampleRate) : null;
    this.lastAfter = Math.max(0, this.candidateAfter);
  }

  /** Where the silence before the last pop began: the end of the last sound before it. */
  get soundEndBeforeLast(): number {
    return this.lastAfter;
  }

  /** The last pop with nothing but silence after it; the end of the stream closes an open candidate. */
  result(): FoundPop | null {
    if (this.candidate) this.close();
    return this.last;
  }
}
