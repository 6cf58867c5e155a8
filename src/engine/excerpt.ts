// A short listening excerpt as a WAV: open the file at (or just before) the span, skip to it,
// copy it out. PCM opens at the span's byte offset, FLAC at a frame before it and MP3 a few
// frames before it (decode/seek.ts); other formats decode from the start. Blocks may be reused by the decoder, so
// the span is copied as it passes. The service runs this on a thread of its own (excerpt-runner.ts).

import { setImmediate as nextTurn } from 'node:timers/promises';
import { excerptFrameSpan } from '../decode/excerpt-span.ts';
import { openAudioFileAt, type SeekedAudio } from '../decode/seek.ts';
import { encodePcmFrames, wavHeader } from '../encode/wav.ts';
import { EarmarkError } from '../errors/index.ts';

export const MAX_EXCERPT_SECONDS = 12;

/** Cap on the excerpt's samples as float32 (12 s of 8 channels at 192 kHz is 74 MB). */
export const MAX_EXCERPT_BYTES = 96 * 1024 * 1024;
/** Cap for decoders that must hold the whole file (MP4 with its index last). */
export const EXCERPT_MAX_DECODED_BYTES = 256 * 1024 * 1024;

export interface Excerpt {
  wav: Uint8Array;
  startSeconds: number;
  endSeconds: number;
  sampleRate: number;
  channels: number;
}

/** The span [startSeconds, endSeconds) clamped to the file and to MAX_EXCERPT_SECONDS, as 24-bit PCM WAV. */
export async function cutExcerpt(
  path: string,
  startSeconds: number,
  endSeconds: number,
  options: { seek?: boolean } = {},
): Promise<Excerpt> {
  if (
    !Number.isFinite(startSeconds) ||
    !Number.isFinite(endSeconds) ||
    startSeconds < 0 ||
    endSeconds <= startSeconds
  ) {
    throw new EarmarkError('invalid_argument', 'the excerpt needs 0 <= startSeconds < endSeconds', {
      field: 'startSeconds',
    });
  }
  if (endSeconds - startSeconds > MAX_EXCERPT_SECONDS) {
    throw new EarmarkError('invalid_argument', `an excerpt is at most ${MAX_EXCERPT_SECONDS} s long`, {
      field: 'endSeconds',
    });
  }
  const opened: SeekedAudio = await openAudioFileAt(path, 0, { maxDecodedBytes: EXCERPT_MAX_DECODED_BYTES });
  const { sampleRate, channels } = opened.audio.format;
  const { startFrame, wantedFrames } = excerptFrameSpan(startSeconds, endSeconds, sampleRate);
  if (wantedFrames * channels * 4 > MAX_EXCERPT_BYTES) {
    throw new EarmarkError(
      'invalid_argument',
      `at ${sampleRate} Hz and ${channels} channels an excerpt is at most ${Math.floor(MAX_EXCERPT_BYTES / (channels * 4 * sampleRate))} s long`,
      { field: 'endSeconds' },
    );
  }
  // `seek: false` decodes from the start: the reference the seeking paths are tested against.
  const decoded =
    options.seek === false || startFrame === 0
      ? opened
      : await openAudioFileAt(path, startFrame, { maxDecodedBytes: EXCERPT_MAX_DECODED_BYTES });
  const out = Array.from({ length: channels }, () => new Float32Array(wantedFrames));
  let position = decoded.firstFrame;
  let copied = 0;
  for await (const block of decoded.audio.blocks) {
    const blockEnd = position + block.frames;
    if (blockEnd > startFrame) {
      const from = Math.max(0, startFrame - position);
      const count = Math.min(block.frames - from, wantedFrames - copied);
      for (let c = 0; c < channels; c++) out[c].set(block.channelData[c].subarray(from, from + count), copied);
      copied += count;
    }
    position = blockEnd;
    if (copied >= wantedFrames) break;
    // Lets a caller on this thread (tests, the command) interleave; the service runs this on a thread of its own.
    await nextTurn();
  }
  if (copied === 0)
    throw new EarmarkError('invalid_argument', 'the excerpt starts after the end of the audio', {
      field: 'startSeconds',
    });
  const channelData = out.map((x) => x.subarray(0, copied));
  const header = wavHeader({ sampleRate, channels, bitsPerSample: 24, float: false, frames: copied });
  const body = encodePcmFrames(channelData, 24, false);
  const wav = new Uint8Array(header.length + body.length);
  wav.set(header);
  wav.set(body, header.length);
  return {
    wav,
    startSeconds: startFrame / sampleRate,
    endSeconds: (startFrame + copied) / sampleRate,
    sampleRate,
    channels,
  };
}
