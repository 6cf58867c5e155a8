// Reads a decoded stream a fixed number of frames at a time, whatever block sizes its decoder
// yields, so several streams can be walked in lockstep. Holds one decoder block and one buffer.

import type { PcmBlock } from '../analysis/audio.ts';
import type { DecodedAudio } from '../decode/types.ts';

export class FrameReader {
  /** The frames of the last read, planar; valid until the next read. */
  readonly channelData: Float32Array[];
  /** Frames handed out so far. */
  framesRead = 0;
  private readonly iterator: AsyncIterator<PcmBlock>;
  private block: PcmBlock | null = null;
  private blockOffset = 0;
  private ended = false;

  constructor(
    readonly audio: DecodedAudio,
    readonly maxFrames: number,
  ) {
    this.channelData = Array.from({ length: audio.format.channels }, () => new Float32Array(maxFrames));
    this.iterator = audio.blocks[Symbol.asyncIterator]();
  }

  get done(): boolean {
    return this.ended;
  }

  /** Fills `channelData` with up to maxFrames frames; fewer only at the end of the stream. Returns the count. */
  async read(): Promise<number> {
    let filled = 0;
    while (filled < this.maxFrames && !this.ended) {
      if (this.block === null || this.blockOffset >= this.block.frames) {
        const next = await this.iterator.next();
        if (next.done) {
          this.ended = true;
          break;
        }
        this.block = next.value;
        this.blockOffset = 0;
        continue;
      }
      // The decoder may reuse its arrays for the next block: copy out before asking for it.
      const n = Math.min(this.maxFrames - filled, this.block.frames - this.blockOffset);
      for (let c = 0; c < this.channelData.length; c++)
        this.channelData[c].set(this.block.channelData[c].subarray(this.blockOffset, this.blockOffset + n), filled);
      this.blockOffset += n;
      filled += n;
    }
    this.framesRead += filled;
    return filled;
  }

  /** Stops the decoder early (closes its file). */
  async close(): Promise<void> {
    if (!this.ended) {
      this.ended = true;
      await this.iterator.return?.();
    }
  }
}
