// Float PCM can hold NaN and Infinity, which would poison every meter (and JSON has no such
// numbers); integer PCM cannot. They are damage to report, not a reason to measure nothing:
// each is replaced by 0 and one warning says how many there were and where the first was.
import type { PcmBlock } from '../analysis/audio.ts';
import type { DecodedAudio, DecodeWarning } from './types.ts';

/** Tallies non-finite samples across blocks and turns them into 0 in place. */
export class NonFiniteSamples {
  count = 0;
  firstFrame = -1;

  /** Zeroes the non-finite samples of channels[c][from, to) and counts them; `atFrame` is the stream frame of index `from`. */
  scrub(channels: readonly Float32Array[], from: number, to: number, atFrame: number): void {
    for (const ch of channels) {
      for (let i = from; i < to; i++) {
        // x - x is 0 for finite x and NaN for NaN and +-Infinity.
        if (ch[i] - ch[i] === 0) continue;
        ch[i] = 0;
        this.add(atFrame + i - from);
      }
    }
  }

  /** One non-finite sample at stream frame `frame`, already replaced by the caller. */
  add(frame: number): void {
    if (this.count++ === 0 || frame < this.firstFrame) this.firstFrame = frame;
  }

  /** The one warning for everything seen, or null when every sample was finite. */
  warning(): DecodeWarning | null {
    if (this.count === 0) return null;
    return {
      code: 'non_finite_samples',
      atFrame: this.firstFrame,
      count: this.count,
      message: `${this.count} non-finite samples (NaN or Infinity), the first at frame ${this.firstFrame}; replaced by 0 for measurement`,
    };
  }
}

export function replaceNonFinite(decoded: DecodedAudio): DecodedAudio {
  const found = new NonFiniteSamples();
  let at = 0;
  async function* blocks(): AsyncGenerator<PcmBlock> {
    try {
      for await (const block of decoded.blocks) {
        found.scrub(block.channelData, 0, block.frames, at);
        at += block.frames;
        yield block;
      }
    } finally {
      // Also when the consumer stops early: what was seen is reported.
      const warning = found.warning();
      if (warning) decoded.warnings.push(warning);
    }
  }
  return {
    format: decoded.format,
    blocks: blocks(),
    get warnings() {
      return decoded.warnings;
    },
    get framesDecoded() {
      return decoded.framesDecoded;
    },
  };
}
