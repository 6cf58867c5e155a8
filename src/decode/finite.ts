// Float PCM can hold NaN and Infinity, which would poison every meter (and JSON has no such
// numbers); integer PCM cannot. Such a file is damaged, as the compressed decoders treat it.
import { EarmarkError } from '../errors/index.ts';
import type { PcmBlock } from '../analysis/audio.ts';
import type { DecodedAudio } from './types.ts';

export function rejectNonFinite(decoded: DecodedAudio): DecodedAudio {
  let at = 0;
  async function* blocks(): AsyncGenerator<PcmBlock> {
    for await (const block of decoded.blocks) {
      for (const ch of block.channelData) {
        for (let i = 0; i < block.frames; i++) {
          // x - x is 0 for finite x and NaN for NaN and +-Infinity.
          if (ch[i] - ch[i] !== 0) throw new EarmarkError('corrupt_file', `float sample ${ch[i]} at frame ${at + i}`, { atFrame: at + i });
        }
      }
      at += block.frames;
      yield block;
    }
  }
  return {
    format: decoded.format,
    blocks: blocks(),
    get warnings() { return decoded.warnings; },
    get framesDecoded() { return decoded.framesDecoded; },
  };
}
