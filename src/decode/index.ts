// Entry point: open any audio file by its bytes, streaming PCM containers here and handing
// everything else to the compressed decoder.
import { open, stat, type FileHandle } from 'node:fs/promises';
import { EarmarkError } from '../errors/index.ts';
import { parseAiff } from './aiff.ts';
import { ByteReader } from './byte-reader.ts';
import { openCompressed } from './compressed.ts';
import { DETECT_HEAD_BYTES, detectAfterId3, detectContainer, id3v2Length } from './detect.ts';
import { replaceNonFinite } from './finite.ts';
import { parseRiff, streamPcm, type PcmPlan } from './riff.ts';
import { safeName } from './safe-name.ts';
import type { Container, DecodedAudio, DecodeOptions } from './types.ts';

export * from './types.ts';
export { detectContainer, detectAfterId3, id3v2Length } from './detect.ts';
export { ByteReader } from './byte-reader.ts';
export { parseRiff, streamPcm, labelsFromChannelMask, convertInterleaved, type PcmPlan, type SampleLayout } from './riff.ts';
export { parseAiff, readExtended80 } from './aiff.ts';

const MAX_ID3_TAGS = 4;

function isPcmContainer(container: Container): boolean {
  return container === 'wav' || container === 'rf64' || container === 'bw64' || container === 'aiff' || container === 'aifc';
}

function parsePlan(reader: ByteReader, container: Container): Promise<PcmPlan> {
  return container === 'aiff' || container === 'aifc' ? parseAiff(reader, container) : parseRiff(reader, container);
}

function checkedFloats(plan: PcmPlan, decoded: DecodedAudio): DecodedAudio {
  return plan.layout.kind === 'float' ? replaceNonFinite(decoded) : decoded;
}

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
export async function openAudioFile(path: string, options: DecodeOptions = {}): Promise<DecodedAudio> {
  let sizeBytes: number;
  try {
    const info = await stat(path);
    if (!info.isFile()) throw new EarmarkError('file_not_found', `${safeName(path)} is not a regular file`);
    sizeBytes = info.size;
  } catch (error) {
    if (error instanceof EarmarkError) throw error;
    throw new EarmarkError('file_not_found', `cannot read ${safeName(path)}: ${(error as NodeJS.ErrnoException).code ?? String(error)}`, {}, { cause: error });
  }
  if (sizeBytes === 0) throw new EarmarkError('empty_file', `${safeName(path)} is empty`);

  let handle: FileHandle;
  try {
    handle = await open(path, 'r');
  } catch (error) {
    throw new EarmarkError('file_not_found', `cannot open ${safeName(path)}: ${(error as NodeJS.ErrnoException).code ?? String(error)}`, {}, { cause: error });
  }
  let plan: PcmPlan;
  let container: Container | null;
  try {
    container = await detectFile(handle);
    if (container === null) throw new EarmarkError('unsupported_format', `${safeName(path)} is not in a recognised audio format`);
    if (!isPcmContainer(container)) return await openCompressed(path, container, options);
    plan = await parsePlan(ByteReader.fromFile(handle, sizeBytes), container);
  } finally {
    await handle.close();
  }
  const dataOffset = plan.dataOffset;
  return checkedFloats(plan, streamPcm(plan, async () => ByteReader.fromFile(await open(path, 'r'), sizeBytes, dataOffset), options));
}

/**
 * Decodes a PCM container (WAV family or AIFF) from a byte stream, for generated or piped
 * input. Compressed containers need a path: they are reported as unsupported_format here.
 */
export async function openPcmStream(stream: AsyncIterable<Uint8Array>, options: DecodeOptions = {}): Promise<DecodedAudio> {
  const reader = ByteReader.fromStream(stream);
  try {
    const head = await reader.peek(12);
    if (head.length === 0) throw new EarmarkError('empty_file', 'the stream is empty');
    const container = detectContainer(head);
    if (container === null || !isPcmContainer(container)) {
      throw new EarmarkError('unsupported_format', container ? `${container} streams need a file path` : 'the stream is not in a recognised PCM format');
    }
    const plan = await parsePlan(reader, container);
    return checkedFloats(plan, streamPcm(plan, async () => reader, options));
  } catch (error) {
    await reader.close();
    throw error;
  }
}
