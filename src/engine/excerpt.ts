// A short listening excerpt as a WAV: decode from the start, skip to the span, copy it out.
// Blocks may be reused by the decoder, so the span is copied as it passes. Skipping is a decode
// pass over the audio before the span (about a second per hour of stereo PCM).

import { setImmediate as nextTurn } from 'node:timers/promises';
import { openAudioFile } from '../decode/index.ts';
import { encodePcmFrames, wavHeader } from '../encode/wav.ts';
import { EarmarkError } from '../errors/index.ts';

export const MAX_EXCERPT_SECONDS = 12;

export interface Excerpt {
  wav: Uint8Array;
  startSeconds: number;
  endSeconds: number;
  sampleRate: number;
  channels: number;
}

/** The span [startSeconds, endSeconds) clamped to the file and to MAX_EXCERPT_SECONDS, as 24-bit PCM WAV. */
export async function cutExcerpt(path: string, startSeconds: number, endSeconds: number): Promise<Excerpt> {
  if (!Number.isFinite(startSeconds) || !Number.isFinite(endSeconds) || startSeconds < 0 || endSeconds <= startSeconds) {
    throw new EarmarkError('invalid_argument', 'the excerpt needs 0 <= startSeconds < endSeconds', { field: 'startSeconds' });
  }
  if (endSeconds - startSeconds > MAX_EXCERPT_SECONDS) {
    throw new EarmarkError('invalid_argument', `an excerpt is at most ${MAX_EXCERPT_SECONDS} s long`, { field: 'endSeconds' });
  }
  const decoded = await openAudioFile(path);
  const { sampleRate, channels } = decoded.format;
  const startFrame = Math.floor(startSeconds * sampleRate);
  const wantedFrames = Math.ceil((endSeconds - startSeconds) * sampleRate);
  const out = Array.from({ length: channels }, () => new Float32Array(wantedFrames));
  let position = 0;
  let copied = 0;
  for await (const block of decoded.blocks) {
    const blockEnd = position + block.frames;
    if (blockEnd > startFrame) {
      const from = Math.max(0, startFrame - position);
      const count = Math.min(block.frames - from, wantedFrames - copied);
      for (let c = 0; c < channels; c++) out[c].set(block.channelData[c].subarray(from, from + count), copied);
      copied += count;
    }
    position = blockEnd;
    if (copied >= wantedFrames) break;
    // This runs in the API process and decoding reads synchronously: let other requests in.
    await nextTurn();
  }
  if (copied === 0) throw new EarmarkError('invalid_argument', 'the excerpt starts after the end of the audio', { field: 'startSeconds' });
  const channelData = out.map((x) => x.subarray(0, copied));
  const header = wavHeader({ sampleRate, channels, bitsPerSample: 24, float: false, frames: copied });
  const body = encodePcmFrames(channelData, 24, false);
  const wav = new Uint8Array(header.length + body.length);
  wav.set(header);
  wav.set(body, header.length);
  return { wav, startSeconds: startFrame / sampleRate, endSeconds: (startFrame + copied) / sampleRate, sampleRate, channels };
}
