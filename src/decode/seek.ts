// Opening a file part-way through, for excerpts: each registry entry that can seeks its own way
// (PCM containers by byte offset, FLAC and MP3 by frame); everything else decodes from the start
// (the caller skips to its span).
import { openAudioFile } from './index.ts';
import { DECODERS } from './registry.ts';
import type { DecodeOptions, SeekedAudio } from './types.ts';

export type { SeekedAudio } from './types.ts';

/** Decodes `path` from `startFrame` or the nearest frame before it the format allows. */
export async function openAudioFileAt(
  path: string,
  startFrame: number,
  options: DecodeOptions = {},
): Promise<SeekedAudio> {
  const whole = await openAudioFile(path, options);
  const frame = Math.max(0, Math.floor(startFrame));
  if (frame === 0) return { audio: whole, firstFrame: 0, method: 'from_start' };
  const seeked = await DECODERS[whole.format.container].seek?.(path, frame, options, whole.format);
  return seeked ?? { audio: whole, firstFrame: 0, method: 'from_start' };
}
