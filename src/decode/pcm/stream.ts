// Streams a parsed PCM header's interleaved samples as planar blocks in constant memory.
import type { PcmBlock } from '../../analysis/audio.ts';
import { EarmarkError } from '../../errors/index.ts';
import type { ByteReader } from '../byte-reader.ts';
import type { AudioFormat, DecodedAudio, DecodeOptions, DecodeWarning } from '../types.ts';
import { DEFAULT_MAX_BLOCK_FRAMES, DEFAULT_MAX_DECODED_SECONDS } from '../types.ts';
import { convertInterleaved, type SampleLayout } from './convert.ts';

/** A parsed header: where the interleaved samples are and how to read them. */
export interface PcmPlan {
  format: AudioFormat;
  layout: SampleLayout;
  blockAlign: number;
  dataOffset: number;
  /** Declared sample bytes; may exceed what the file holds. */
  dataBytes: number;
  warnings: DecodeWarning[];
}

/**
 * Streams a parsed plan as planar blocks. `openReader` is called on first iteration and must
 * return a reader positioned at plan.dataOffset; it is closed when iteration ends or stops.
 * The block's Float32Arrays are reused for the next block (saves a fifth of decode time in
 * allocation and GC): consumers read a block during push() and copy what they keep.
 */
export function streamPcm(
  plan: PcmPlan,
  openReader: () => Promise<ByteReader>,
  options: DecodeOptions = {},
): DecodedAudio {
  const maxBlockFrames = options.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES;
  if (!Number.isInteger(maxBlockFrames) || maxBlockFrames < 1) {
    throw new EarmarkError('invalid_argument', `maxBlockFrames must be a positive integer, got ${maxBlockFrames}`, {
      field: 'maxBlockFrames',
    });
  }
  const { channels } = plan.format;
  const { blockAlign, layout } = plan;
  const warnings = [...plan.warnings];
  const declaredFrames = Math.floor(plan.dataBytes / blockAlign);
  const maxFrames = Math.floor((options.maxDecodedSeconds ?? DEFAULT_MAX_DECODED_SECONDS) * plan.format.sampleRate);
  if (!(maxFrames > 0))
    throw new EarmarkError('invalid_argument', 'maxDecodedSeconds must be positive', { field: 'maxDecodedSeconds' });
  let framesDecoded = 0;

  async function* blocks(): AsyncGenerator<PcmBlock> {
    const reader = await openReader();
    try {
      const framesPerRead = Math.max(1, Math.floor(reader.capacityBytes / blockAlign));
      let framesLeft = declaredFrames;
      let ended = false;
      const buffers = Array.from({ length: channels }, () => new Float32Array(Math.min(maxBlockFrames, framesLeft)));
      while (framesLeft > 0 && !ended) {
        const blockFrames = Math.min(maxBlockFrames, framesLeft);
        const offered = options.blockArrays?.();
        const target = offered && offered.length === channels && offered[0].length >= blockFrames ? offered : buffers;
        const channelData = blockFrames === target[0].length ? target : target.map((a) => a.subarray(0, blockFrames));
        let filled = 0;
        while (filled < blockFrames) {
          const wantFrames = Math.min(blockFrames - filled, framesPerRead);
          const bytes = await reader.read(wantFrames * blockAlign);
          const gotFrames = Math.floor(bytes.length / blockAlign);
          convertInterleaved(bytes, gotFrames, channels, layout, channelData, filled);
          filled += gotFrames;
          if (gotFrames < wantFrames) {
            ended = true;
            const at = framesDecoded + filled;
            const partial = bytes.length % blockAlign;
            warnings.push({
              code: 'truncated_data',
              message: `audio data ends after ${at} of ${declaredFrames} frames declared${partial ? ` (partial last frame of ${partial} bytes dropped)` : ''}`,
              atFrame: at,
            });
            break;
          }
        }
        framesLeft -= filled;
        framesDecoded += filled;
        // Checked on frames read, not on the header's claim: a cut file that claims days is still read.
        if (framesDecoded > maxFrames) {
          throw new EarmarkError(
            'decoded_size_exceeded',
            `decoded audio exceeds the cap of ${maxFrames} frames (${(maxFrames / plan.format.sampleRate).toFixed(0)} s)`,
            { atFrame: framesDecoded - filled, maxDecodedFrames: maxFrames },
          );
        }
        if (filled > 0)
          yield {
            channelData: filled === channelData[0].length ? channelData : channelData.map((a) => a.subarray(0, filled)),
            frames: filled,
          };
      }
    } finally {
      await reader.close();
    }
  }

  return {
    format: plan.format,
    blocks: blocks(),
    warnings,
    get framesDecoded() {
      return framesDecoded;
    },
  };
}
