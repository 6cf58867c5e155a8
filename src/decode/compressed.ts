// The decode loop every compressed format shares, through the per-format audio-decode packages;
// each format's file in formats/ supplies its probe and input slicing. Streams in fixed-size
// input chunks; MP4 with its index (moov) after the audio is fed index first (faststartMoov) and
// streamed too, under the decoded-size cap.
import { createReadStream } from 'node:fs';
import { stat } from 'node:fs/promises';
import { defaultChannelLabels, type PcmBlock } from '../analysis/audio.ts';
import { EarmarkError } from '../errors/index.ts';
import {
  DEFAULT_MAX_BLOCK_FRAMES,
  DEFAULT_MAX_DECODED_BYTES,
  DEFAULT_MAX_DECODED_SECONDS,
  type AudioFormat,
  type ByteObserver,
  type Container,
  type DecodeOptions,
  type DecodedAudio,
  type DecodeWarning,
} from './types.ts';
import { readRange } from './byte-reader.ts';
import { loadCodec, type CodecPackage } from './compressed-codecs.ts';
import { faststartMoov } from './compressed-mp4.ts';
import { OutputCheck } from './compressed-output.ts';
import type { Probe } from './compressed-probe.ts';
import type { Decoder } from './decoder.ts';
import { checkStreamNumbers } from './limits.ts';
import { safeName } from './safe-name.ts';

/** Input chunk size read from the file; native FLAC is cut further (compressed-flac.ts). */
export const INPUT_CHUNK_BYTES = 256 * 1024;

export interface InputSlicer {
  push(chunk: Uint8Array, last: boolean): Iterable<Uint8Array>;
}

/** What a compressed format adds to the shared decode loop. */
export interface CompressedFormat {
  /** What the container declares, read from its headers (and tail) without decoding. */
  probe(path: string, fileBytes: number): Promise<Probe>;
  /** How the file's bytes are cut into decode() calls. */
  slicer(channels: number): InputSlicer;
}

type CompressedDecoderSpec = CompressedFormat & Pick<Decoder, 'detect' | 'detectAfterId3' | 'seek' | 'costMsPerMinute'>;

/** A registry entry for a compressed format: `open` and `probe` run the shared loop with the format's parts. */
export function compressedDecoder(spec: CompressedDecoderSpec): Decoder {
  const { detect, detectAfterId3, seek, costMsPerMinute } = spec;
  return {
    detect,
    costMsPerMinute,
    ...(detectAfterId3 ? { detectAfterId3 } : {}),
    ...(seek ? { seek } : {}),
    probe: async (file) => (await probeFile(file.path, file.container, spec)).format,
    open: (file, _handle, options) => openCompressed(file.path, file.container, spec, options),
  };
}

async function probeFile(
  path: string,
  container: Container,
  compressed: CompressedFormat,
): Promise<{ fileBytes: number; p: Probe; format: AudioFormat }> {
  const fileBytes = await fileSize(path);
  const p = await compressed.probe(path, fileBytes);
  checkStreamNumbers(`the ${container} header`, p.channels, p.sampleRate);
  return {
    fileBytes,
    p,
    format: {
      container,
      encoding: p.encoding,
      sampleRate: p.sampleRate,
      channels: p.channels,
      bitsPerSample: p.bitsPerSample,
      frames: p.frames,
      durationSeconds: p.frames === null ? null : p.frames / p.sampleRate,
      channelLabels: defaultChannelLabels(p.channels),
      channelMask: null,
      timeReferenceSamples: null,
    },
  };
}

async function openCompressed(
  path: string,
  container: Container,
  compressed: CompressedFormat,
  options: DecodeOptions = {},
): Promise<DecodedAudio> {
  const blockFrames = options.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES;
  const maxDecodedBytes = options.maxDecodedBytes ?? DEFAULT_MAX_DECODED_BYTES;
  const maxDecodedSeconds = options.maxDecodedSeconds ?? DEFAULT_MAX_DECODED_SECONDS;
  if (!Number.isSafeInteger(blockFrames) || blockFrames < 1)
    throw new EarmarkError('invalid_argument', 'maxBlockFrames must be a positive integer', {
      field: 'maxBlockFrames',
    });
  if (!(maxDecodedBytes > 0))
    throw new EarmarkError('invalid_argument', 'maxDecodedBytes must be positive', { field: 'maxDecodedBytes' });
  if (!(maxDecodedSeconds > 0))
    throw new EarmarkError('invalid_argument', 'maxDecodedSeconds must be positive', { field: 'maxDecodedSeconds' });

  const { fileBytes, p, format } = await probeFile(path, container, compressed);
  if (p.wholeFile) checkWholeFileCap(p, fileBytes, maxDecodedBytes);
  const warnings: DecodeWarning[] = [];
  const check = new OutputCheck(
    p,
    blockFrames,
    warnings,
    p.wholeFile ? maxDecodedBytes : Infinity,
    Math.floor(maxDecodedSeconds * p.sampleRate),
    options.blockArrays,
  );
  return {
    format,
    blocks: decodeBlocks(path, compressed.slicer(p.channels), p, fileBytes, check, options.onBytes),
    warnings,
    get framesDecoded() {
      return check.framesOut;
    },
  };
}

async function* decodeBlocks(
  path: string,
  slicer: InputSlicer,
  p: Probe,
  fileBytes: number,
  check: OutputCheck,
  onBytes: ByteObserver | undefined,
): AsyncGenerator<PcmBlock> {
  const codec = await loadCodec(p.codec);
  const layout = p.mp4Layout;
  // Byte ranges of the file in the order the decoder reads them; an index-at-the-end MP4 sends
  // everything before its first mdat and the moved moov first, then the rest without the old moov.
  const ranges: [number, number][] = layout
    ? [
        [layout.firstMdat, layout.moovStart],
        [layout.moovEnd, fileBytes],
      ]
    : [[0, fileBytes]];
  const total = ranges.reduce((n, [from, to]) => n + to - from, 0);
  try {
    let fed = 0;
    if (layout) {
      const head = await readRange(path, 0, layout.firstMdat);
      onBytes?.(0, head);
      const moov = await faststartMoov(path, layout);
      const first = new Uint8Array(head.length + moov.length);
      first.set(head);
      first.set(moov, head.length);
      yield* check.take(await codec.decode(first), total === 0);
    }
    for (const [from, to] of ranges) {
      if (to <= from) continue;
      const stream = createReadStream(path, { start: from, end: to - 1, highWaterMark: INPUT_CHUNK_BYTES });
      let position = from;
      try {
        for await (const chunk of stream as AsyncIterable<Buffer>) {
          onBytes?.(position, chunk);
          position += chunk.byteLength;
          fed += chunk.byteLength;
          const last = fed >= total;
          // Copy: fs Buffers may sit at any offset of a shared pool; decoders want a plain, own buffer.
          for (const slice of slicer.push(new Uint8Array(chunk), last))
            yield* check.take(await codec.decode(slice), last);
        }
      } finally {
        stream.destroy();
      }
    }
    if (codec.flush) yield* check.take(await codec.flush(), true);
    yield* check.finish();
  } catch (e) {
    throw asDecodeError(e, path);
  } finally {
    codec.free();
  }
}

/**
 * Bytes per decode() call where digital silence packs minutes into a few KiB (30 minutes of
 * stereo silence measured 0.2 to 1.1 MB as Vorbis, Opus, Ogg FLAC, ADTS or M4A AAC): 1 KiB of
 * silence measured at most 433,000 output frames (Vorbis; 4 KiB: 1.6 million, and 50 MB more peak
 * RSS over a 15-minute file). These decoders keep partial pages, frames and boxes between calls.
 */
export const SMALL_SLICE_BYTES = 1024;

/**
 * MPEG audio frames are at least 96 bytes for 1152 frames (32 kbit/s at 48 kHz; less at lower
 * rates): 16 KiB stays under about 200,000 output frames (256 KiB of silence: 211 MiB peak RSS
 * over 15 minutes, 16 KiB: see the bombs test).
 */
export const MP3_SLICE_BYTES = 16 * 1024;

/** Cuts each chunk into slices of at most `sliceBytes`. */
export function fixedSlices(sliceBytes: number): InputSlicer {
  return {
    *push(chunk) {
      for (let at = 0; at < chunk.length; at += sliceBytes) yield chunk.subarray(at, at + sliceBytes);
    },
  };
}

/** Each chunk whole, as read. */
export const WHOLE_CHUNKS: InputSlicer = { push: (chunk) => [chunk] };

/**
 * Decodes `prefix`, then the file from `offset` on, through `slicer` and `check`: the loop of a
 * decode that starts part-way through (seeking).
 */
export async function* decodeFrom(
  path: string,
  codecName: CodecPackage,
  prefix: Uint8Array | null,
  offset: number,
  fileBytes: number,
  slicer: InputSlicer,
  check: OutputCheck,
): AsyncGenerator<PcmBlock> {
  const codec = await loadCodec(codecName);
  const stream = createReadStream(path, { start: offset, highWaterMark: INPUT_CHUNK_BYTES });
  try {
    if (prefix) yield* check.take(await codec.decode(prefix), false);
    let read = offset;
    for await (const chunk of stream as AsyncIterable<Buffer>) {
      read += chunk.byteLength;
      const last = read >= fileBytes;
      for (const slice of slicer.push(new Uint8Array(chunk), last)) yield* check.take(await codec.decode(slice), last);
    }
    if (codec.flush) yield* check.take(await codec.flush(), true);
    yield* check.finish();
  } catch (e) {
    if (e instanceof EarmarkError) throw e;
    throw new EarmarkError(
      'corrupt_file',
      `decoder failed: ${e instanceof Error ? e.message : String(e)}`,
      {},
      { cause: e },
    );
  } finally {
    codec.free();
    stream.destroy();
  }
}

function checkWholeFileCap(p: Probe, fileBytes: number, cap: number): void {
  // The larger of what mdhd declares and what the sample table holds: either may be the lie.
  const frames = Math.max(p.frames ?? -1, p.tableFrames ?? -1);
  const estimate = frames < 0 ? null : frames * p.channels * 4;
  if (fileBytes > cap || (estimate !== null && estimate > cap)) {
    throw new EarmarkError(
      'decoded_size_exceeded',
      `this ${p.encoding} file has its index after the audio and would decode to about ${estimate ?? fileBytes} bytes, over the cap of ${cap}`,
      { estimatedBytes: estimate, maxDecodedBytes: cap },
    );
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
  if (typeof code === 'string' && code.startsWith('E'))
    return new EarmarkError('file_not_found', `cannot read ${safeName(path)}`, {}, { cause: e });
  return new EarmarkError(
    'corrupt_file',
    `decoder failed: ${e instanceof Error ? e.message : String(e)}`,
    {},
    { cause: e },
  );
}
