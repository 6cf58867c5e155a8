// Compressed formats (FLAC, MP3, AAC/M4A, Ogg Vorbis/Opus/FLAC, WebM, CAF) through the per-format
// audio-decode packages. Streams in fixed-size input chunks; only MP4 with its index (moov)
// after the audio is decoded whole, under the decoded-size cap.
import { createReadStream } from 'node:fs';
import { readFile, stat } from 'node:fs/promises';
import { defaultChannelLabels, type PcmBlock } from '../analysis/audio.ts';
import { EarmarkError } from '../errors/index.ts';
import {
  DEFAULT_MAX_BLOCK_FRAMES, DEFAULT_MAX_DECODED_BYTES,
  type AudioFormat, type Container, type DecodeOptions, type DecodedAudio, type DecodeWarning,
} from './types.ts';
import { loadCodec } from './compressed-codecs.ts';
import { OutputCheck } from './compressed-output.ts';
import { probe, type Probe } from './compressed-probe.ts';
import { checkStreamNumbers } from './riff.ts';
import { safeName } from './safe-name.ts';

/** Input chunk size: 64 KiB–1 MiB is where the decoders behave (tiny chunks lose FLAC frames). */
export const INPUT_CHUNK_BYTES = 256 * 1024;

export async function openCompressed(path: string, container: Container, options: DecodeOptions = {}): Promise<DecodedAudio> {
  const blockFrames = options.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES;
  const maxDecodedBytes = options.maxDecodedBytes ?? DEFAULT_MAX_DECODED_BYTES;
  if (!Number.isSafeInteger(blockFrames) || blockFrames < 1) throw new EarmarkError('invalid_argument', 'maxBlockFrames must be a positive integer', { field: 'maxBlockFrames' });
  if (!(maxDecodedBytes > 0)) throw new EarmarkError('invalid_argument', 'maxDecodedBytes must be positive', { field: 'maxDecodedBytes' });

  const fileBytes = await fileSize(path);
  const p = await probe(path, container, fileBytes);
  checkStreamNumbers(`the ${container} header`, p.channels, p.sampleRate);
  if (p.wholeFile) checkWholeFileCap(p, fileBytes, maxDecodedBytes);

  const format: AudioFormat = {
    container, encoding: p.encoding, sampleRate: p.sampleRate, channels: p.channels, bitsPerSample: p.bitsPerSample,
    frames: p.frames, durationSeconds: p.frames === null ? null : p.frames / p.sampleRate,
    channelLabels: defaultChannelLabels(p.channels), channelMask: null, timeReferenceSamples: null,
  };
  const warnings: DecodeWarning[] = [];
  const check = new OutputCheck(p, blockFrames, warnings, p.wholeFile ? maxDecodedBytes : Infinity);
  return { format, blocks: decodeBlocks(path, p, fileBytes, check), warnings, get framesDecoded() { return check.framesOut; } };
}

async function* decodeBlocks(path: string, p: Probe, fileBytes: number, check: OutputCheck): AsyncGenerator<PcmBlock> {
  const codec = await loadCodec(p.codec);
  const stream = p.wholeFile ? null : createReadStream(path, { highWaterMark: INPUT_CHUNK_BYTES });
  try {
    if (stream) {
      let read = 0;
      for await (const chunk of stream as AsyncIterable<Buffer>) {
        read += chunk.byteLength;
        // Copy: fs Buffers may sit at any offset of a shared pool; decoders want a plain, own buffer.
        yield* check.take(await codec.decode(new Uint8Array(chunk)), read >= fileBytes);
      }
    } else {
      yield* check.take(await codec.decode(new Uint8Array(await readFile(path))), true);
    }
    if (codec.flush) yield* check.take(await codec.flush(), true);
    yield* check.finish();
  } catch (e) {
    throw asDecodeError(e, path);
  } finally {
    codec.free();
    stream?.destroy();
  }
}

function checkWholeFileCap(p: Probe, fileBytes: number, cap: number): void {
  const estimate = p.frames === null ? null : p.frames * p.channels * 4;
  if (fileBytes > cap || (estimate !== null && estimate > cap)) {
    throw new EarmarkError('decoded_size_exceeded',
      `this ${p.encoding} file must be decoded whole (index after the audio) and needs about ${estimate ?? fileBytes} bytes, over the cap of ${cap}`,
      { estimatedBytes: estimate, maxDecodedBytes: cap });
  }
}

async function fileSize(path: string): Promise<number> {
  try {
    const s = await stat(path);
    if (s.size === 0) throw new EarmarkError('empty_file', `${safeName(path)} is empty`);
    return s.size;
  } catch (e) {
    if (e instanceof EarmarkError) throw e;
    throw new EarmarkError('file_not_found', `cannot read ${safeName(path)}`, {}, { cause: e });
  }
}

/** Decoders throw plain Errors on input they cannot parse: that is damage, not our bug. */
function asDecodeError(e: unknown, path: string): EarmarkError {
  if (e instanceof EarmarkError) return e;
  const code = (e as { code?: unknown } | null)?.code;
  if (typeof code === 'string' && code.startsWith('E')) return new EarmarkError('file_not_found', `cannot read ${safeName(path)}`, {}, { cause: e });
  return new EarmarkError('corrupt_file', `decoder failed: ${e instanceof Error ? e.message : String(e)}`, {}, { cause: e });
}
