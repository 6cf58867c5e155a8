// Which frames an excerpt reads, and for PCM containers which bytes: one formula for the excerpt
// itself (engine/excerpt.ts) and for the object store's sparse copy (storage/sparse-excerpt.ts),
// so the bytes fetched are the bytes the decode reads.
import { DEFAULT_READ_BYTES } from './byte-reader.ts';
import type { PcmPlan } from './pcm/stream.ts';
import { DEFAULT_MAX_BLOCK_FRAMES } from './types.ts';

/** The first frame of [startSeconds, endSeconds) and how many frames it wants. */
export function excerptFrameSpan(
  startSeconds: number,
  endSeconds: number,
  sampleRate: number,
): { startFrame: number; wantedFrames: number } {
  return {
    startFrame: Math.floor(startSeconds * sampleRate),
    wantedFrames: Math.ceil((endSeconds - startSeconds) * sampleRate),
  };
}

/**
 * The bytes [from, to) a PCM excerpt reads from its samples: pcm/decoder.ts seeks to
 * dataOffset + startFrame * blockAlign, and streamPcm fills whole blocks of up to
 * DEFAULT_MAX_BLOCK_FRAMES through a ByteReader that reads ahead up to DEFAULT_READ_BYTES, so the
 * last block and the read-ahead are counted too (the excerpt ignores their frames past the span).
 */
export function pcmExcerptBytes(
  plan: Pick<PcmPlan, 'dataOffset' | 'dataBytes' | 'blockAlign' | 'format'>,
  startSeconds: number,
  endSeconds: number,
): { from: number; to: number } {
  const { startFrame, wantedFrames } = excerptFrameSpan(startSeconds, endSeconds, plan.format.sampleRate);
  const from = plan.dataOffset + Math.min(startFrame * plan.blockAlign, plan.dataBytes);
  const to = from + (wantedFrames + DEFAULT_MAX_BLOCK_FRAMES) * plan.blockAlign + DEFAULT_READ_BYTES;
  return { from, to };
}
