// A registry entry for an uncompressed container: its header parser plus the shared PCM streamer.
// Any frame is reachable by byte offset, so every PCM container seeks exactly.
import { open, stat } from 'node:fs/promises';
import { ByteReader } from '../byte-reader.ts';
import type { Decoder } from '../decoder.ts';
import { replaceNonFinite } from '../finite.ts';
import type { Container, DecodedAudio, DecodeOptions } from '../types.ts';
import { streamPcm, type PcmPlan } from './stream.ts';

/** Reads a container's headers from `reader` up to its first sample. */
export type PcmHeaderParser = (reader: ByteReader, container: Container) => Promise<PcmPlan>;

function checkedFloats(plan: PcmPlan, decoded: DecodedAudio): DecodedAudio {
  return plan.layout.kind === 'float' ? replaceNonFinite(decoded) : decoded;
}

export function pcmDecoder(detect: (head: Uint8Array) => boolean, parse: PcmHeaderParser): Decoder {
  return {
    detect,
    // The read (a kernel copy from the page cache) and the conversion to float.
    costMsPerMinute: 10.5,
    async probe(file) {
      const handle = await open(file.path, 'r');
      try {
        return (await parse(ByteReader.fromFile(handle, file.sizeBytes), file.container)).format;
      } finally {
        await handle.close();
      }
    },
    async open(file, handle, options) {
      const { onBytes } = options;
      const plan = await parse(ByteReader.fromFile(handle, file.sizeBytes).observe(onBytes), file.container);
      const { path, sizeBytes } = file;
      const openReader = async () =>
        ByteReader.fromFile(await open(path, 'r'), sizeBytes, plan.dataOffset).observe(onBytes);
      return checkedFloats(plan, streamPcm(plan, openReader, options));
    },
    async openStream(reader, container, options) {
      const plan = await parse(reader, container);
      return checkedFloats(
        plan,
        streamPcm(plan, async () => reader, options),
      );
    },
    async seek(path, startFrame, options, format) {
      return {
        audio: await openPcmAt(path, parse, format.container, startFrame, options),
        firstFrame: startFrame,
        method: 'pcm_offset',
      };
    },
  };
}

async function openPcmAt(
  path: string,
  parse: PcmHeaderParser,
  container: Container,
  frame: number,
  options: DecodeOptions,
): Promise<DecodedAudio> {
  const sizeBytes = (await stat(path)).size;
  const handle = await open(path, 'r');
  let plan: Awaited<ReturnType<typeof parse>>;
  try {
    plan = await parse(ByteReader.fromFile(handle, sizeBytes), container);
  } finally {
    await handle.close();
  }
  // The frame's first byte: data offset + frame * blockAlign; past the end there is nothing to read.
  const skipBytes = Math.min(frame * plan.blockAlign, plan.dataBytes);
  const moved = {
    ...plan,
    dataOffset: plan.dataOffset + skipBytes,
    dataBytes: plan.dataBytes - skipBytes,
    warnings: [],
  };
  return checkedFloats(
    moved,
    streamPcm(moved, async () => ByteReader.fromFile(await open(path, 'r'), sizeBytes, moved.dataOffset), options),
  );
}
