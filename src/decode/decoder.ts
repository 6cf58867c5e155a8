// The one shape of a container decoder. Each container is one entry in registry.ts, built in its
// own file under formats/.
import type { FileHandle } from 'node:fs/promises';
import type { ByteReader } from './byte-reader.ts';
import type { AudioFormat, Container, DecodedAudio, DecodeOptions, SeekedAudio } from './types.ts';

/** A file whose container detection has named. */
export interface AudioFile {
  path: string;
  container: Container;
  sizeBytes: number;
}

export interface Decoder {
  /**
   * Rough decode time in ms per 48 kHz stereo audio minute on one thread, in the units of the
   * meters' costMsPerMinute (analysis/runner.ts): the thread planner keeps the meters off the
   * decoding thread by it. From bench:decoders (10-minute 44.1 kHz files, decode alone).
   */
  costMsPerMinute: number;
  /** Whether the file's first bytes (DETECT_HEAD_BYTES of them) carry this container's signature. */
  detect(head: Uint8Array): boolean;
  /** Whether `rest`, the bytes after an ID3v2 tag, starts this container; only formats a tag may precede have it. */
  detectAfterId3?(rest: Uint8Array): boolean;
  /** Format facts from the headers, without decoding the audio. */
  probe(file: AudioFile): Promise<AudioFormat>;
  /** Streams the whole file; `handle` is open on it for the duration of the call (header parsing may read it). */
  open(file: AudioFile, handle: FileHandle, options: DecodeOptions): Promise<DecodedAudio>;
  /** Streams from a byte source with no path; only containers that need no seeking have it. */
  openStream?(reader: ByteReader, container: Container, options: DecodeOptions): Promise<DecodedAudio>;
  /** Decodes from `startFrame` or the nearest frame before it; null when only a decode from the start will do. */
  seek?(path: string, startFrame: number, options: DecodeOptions, format: AudioFormat): Promise<SeekedAudio | null>;
}
