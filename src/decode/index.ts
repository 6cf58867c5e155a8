// Entry point: open any audio file by its bytes. Detection names the container; its registry
// entry (registry.ts) decodes it.
import { open, stat, type FileHandle } from 'node:fs/promises';
import { EarmarkError, errnoCode } from '../errors/index.ts';
import { ByteReader } from './byte-reader.ts';
import { applyDeclaredLayout } from './declared-layout.ts';
import { DETECT_HEAD_BYTES, detectAfterId3, detectContainer } from './detect.ts';
import { id3v2Length } from './bytes.ts';
import { DECODERS } from './registry.ts';
import { safeName } from './safe-name.ts';
import type { Container, DecodedAudio, DecodeOptions } from './types.ts';

export * from './types.ts';
export { detectContainer, detectAfterId3 } from './detect.ts';
export { id3v2Length } from './bytes.ts';
export { ByteReader } from './byte-reader.ts';
export { DECODERS } from './registry.ts';
export type { AudioFile, Decoder } from './decoder.ts';
export { parseRiff, labelsFromChannelMask } from './riff.ts';
export { streamPcm, type PcmPlan } from './pcm/stream.ts';
export { convertInterleaved, type SampleLayout } from './pcm/convert.ts';
export { parseAiff, readExtended80 } from './aiff.ts';

const MAX_ID3_TAGS = 4;

async function readAt(handle: FileHandle, position: number, length: number): Promise<Uint8Array> {
  const buffer = new Uint8Array(length);
  const { bytesRead } = await handle.read(buffer, 0, length, position);
  return buffer.subarray(0, bytesRead);
}

/** Detects the container, following up to a few ID3v2 tags of any length. */
async function detectFile(handle: FileHandle): Promise<Container | null> {
  const head = await readAt(handle, 0, DETECT_HEAD_BYTES);
  let container = detectContainer(head);
  let tagEnd = 0;
  let tagHead = head;
  for (let i = 0; container === null && i < MAX_ID3_TAGS; i++) {
    const tagBytes = id3v2Length(tagHead);
    if (tagBytes === 0) break;
    tagEnd += tagBytes;
    tagHead = await readAt(handle, tagEnd, DETECT_HEAD_BYTES);
    container = detectAfterId3(tagHead);
  }
  return container;
}

/**
 * Opens `path` for streaming decode. File handles are opened again when `blocks` is first
 * iterated and closed when iteration ends or stops early, so an unread result holds no handle.
 */
export function openAudioFile(path: string, options: DecodeOptions = {}): Promise<DecodedAudio> {
  return openWith(path, null, options);
}

/** Opens `path` with the decoder of `container`, without detection (tests, and callers that know better). */
export function openAudioFileAs(
  path: string,
  container: Container,
  options: DecodeOptions = {},
): Promise<DecodedAudio> {
  return openWith(path, container, options);
}

async function openWith(path: string, knownContainer: Container | null, options: DecodeOptions): Promise<DecodedAudio> {
  let sizeBytes: number;
  try {
    const info = await stat(path);
    if (!info.isFile()) throw new EarmarkError('file_not_found', `${safeName(path)} is not a regular file`);
    sizeBytes = info.size;
  } catch (error) {
    if (error instanceof EarmarkError) throw error;
    throw new EarmarkError(
      'file_not_found',
      `cannot read ${safeName(path)}: ${errnoCode(error) ?? String(error)}`,
      {},
      { cause: error },
    );
  }
  if (sizeBytes === 0) throw new EarmarkError('empty_file', `${safeName(path)} is empty`);

  let handle: FileHandle;
  try {
    handle = await open(path, 'r');
  } catch (error) {
    throw new EarmarkError(
      'file_not_found',
      `cannot open ${safeName(path)}: ${errnoCode(error) ?? String(error)}`,
      {},
      { cause: error },
    );
  }
  try {
    const container = knownContainer ?? (await detectFile(handle));
    if (container === null)
      throw new EarmarkError('unsupported_format', `${safeName(path)} is not in a recognised audio format`);
    const audio = await DECODERS[container].open({ path, container, sizeBytes }, handle, options);
    return applyDeclaredLayout(audio, options.layout);
  } finally {
    await handle.close();
  }
}

/**
 * Decodes a PCM container (WAV family or AIFF) from a byte stream, for generated or piped
 * input. Compressed containers need a path: they are reported as unsupported_format here.
 */
export async function openPcmStream(
  stream: AsyncIterable<Uint8Array>,
  options: DecodeOptions = {},
): Promise<DecodedAudio> {
  const reader = ByteReader.fromStream(stream);
  try {
    const head = await reader.peek(12);
    if (head.length === 0) throw new EarmarkError('empty_file', 'the stream is empty');
    const container = detectContainer(head);
    const decoder = container === null ? null : DECODERS[container];
    if (container === null || !decoder?.openStream) {
      throw new EarmarkError(
        'unsupported_format',
        container ? `${container} streams need a file path` : 'the stream is not in a recognised PCM format',
      );
    }
    return applyDeclaredLayout(await decoder.openStream(reader, container, options), options.layout);
  } catch (error) {
    await reader.close();
    throw error;
  }
}
