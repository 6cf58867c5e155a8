import type { ChannelLabel, PcmBlock } from '../analysis/audio.ts';
import type { LayoutName } from '../analysis/layouts.ts';
import type { DECODERS } from './registry.ts';

// One per entry of the decoder registry (registry.ts).
/** The audio container, named from the file's bytes. */
export type Container = keyof typeof DECODERS;

/** Everything known about the file's audio before (and, for `frames`, after) decoding. */
export interface AudioFormat {
  container: Container;
  /** e.g. 'pcm_s16le', 'pcm_s24be', 'pcm_f32le', 'pcm_u8', 'flac', 'mp3', 'aac', 'vorbis', 'opus'. */
  encoding: string;
  sampleRate: number;
  channels: number;
  /** Bits per stored sample for PCM and FLAC; null for lossy codecs. */
  bitsPerSample: number | null;
  /** Frames the container declares; null when it cannot say before decoding. */
  frames: number | null;
  durationSeconds: number | null;
  channelLabels: ChannelLabel[];
  /**
   * Where channelLabels come from: the WAVE channel mask, the BW64 chna chunk, or a declared
   * layout (DecodeOptions.layout); absent when they are the default order for the channel count.
   */
  layoutFrom?: 'channel_mask' | 'chna' | 'declared';
  /** WAVE_FORMAT_EXTENSIBLE dwChannelMask, when present. */
  channelMask: number | null;
  /** BWF bext TimeReference: samples since midnight of the first sample; null without bext. */
  timeReferenceSamples: number | null;
  /** Loudness the file's metadata declares (BWF bext v2, iXML), one entry per source that declares any; WAVE family only. */
  declaredLoudness?: DeclaredLoudness[];
}

export type DeclaredLoudnessSource = 'bext' | 'ixml';

/** Loudness figures a file's metadata states about itself; null where a field is not set. */
export interface DeclaredLoudness {
  source: DeclaredLoudnessSource;
  integratedLufs: number | null;
  loudnessRangeLu: number | null;
  maxTruePeakDbtp: number | null;
  maxMomentaryLufs: number | null;
  maxShortTermLufs: number | null;
}

export type DecodeWarningCode =
  | 'truncated_data'
  | 'trailing_garbage'
  | 'channels_restored'
  | 'frames_mismatch'
  | 'odd_chunk_padding_missing'
  | 'non_finite_samples'
  | 'channel_unidentified'
  | 'declared_layout_unused'
  | 'unreadable_metadata';

export interface DecodeWarning {
  code: DecodeWarningCode;
  message: string;
  /** Sample-frame position the warning applies from; every warning of damage has one (where the audio stops or the first bad sample). */
  atFrame?: number;
  /** How many samples the warning covers (non_finite_samples: all of them, every channel); channel_unidentified: how many channels. */
  count?: number;
}

/**
 * The one output shape of every decoder. Iterate `blocks` once; blocks are planar Float32
 * with at most `maxBlockFrames` frames. A decoder may reuse a block's arrays for the next block
 * (the PCM/WAV/AIFF streamer does), so read a block before asking for the next one and copy what
 * must outlive it. `warnings` fills while decoding: read it after the
 * iteration ends. `framesDecoded` is final after the iteration ends.
 */
export interface DecodedAudio {
  format: AudioFormat;
  blocks: AsyncIterable<PcmBlock>;
  readonly warnings: DecodeWarning[];
  readonly framesDecoded: number;
}

/** A decode that starts part-way through a file (excerpts). */
export interface SeekedAudio {
  audio: DecodedAudio;
  /** Frame of the first sample the blocks hold: at or before the frame asked for. */
  firstFrame: number;
  /** How the start was reached. */
  method: 'pcm_offset' | 'flac_frame' | 'mp3_frame' | 'from_start';
}

/** Called with the file offset of each span of bytes a decoder reads, in the order read; the view is valid during the call. */
export type ByteObserver = (position: number, bytes: Uint8Array) => void;

export interface DecodeOptions {
  /** Largest block handed to meters (frames). Default 65536. */
  maxBlockFrames?: number;
  /**
   * Arrays to decode the next block into, offered by the consumer (the parallel runner's shared
   * ring, or one reused set on one thread) to save a copy and an allocation per block; asked once
   * per block, after the previous block was taken; null for the decoder's own. The PCM streamer
   * and the compressed decoders' output write in place; the arrays must stay untouched by the
   * consumer until it asks for the next block.
   */
  blockArrays?: () => readonly Float32Array[] | null;
  /** Cap on decoded PCM bytes (as float32) for decoders that cannot stream. Default 2 GiB. */
  maxDecodedBytes?: number;
  /**
   * Cap on the audio decoded from any file, checked as frames come out (a few KiB of silence can
   * declare or decode to days). Default DEFAULT_MAX_DECODED_SECONDS.
   */
  maxDecodedSeconds?: number;
  /**
   * Told of the bytes the decode reads from the file (headers and audio; not the out-of-order
   * reads of probes and seeks), so a hash needs no second read (file-hash.ts).
   */
  onBytes?: ByteObserver;
  /**
   * The channel layout of a file that does not say (no WAVE channel mask, no chna chunk); a file
   * that says keeps its own. A channel count other than the layout's is a layout_mismatch error.
   */
  layout?: LayoutName;
}

export const DEFAULT_MAX_BLOCK_FRAMES = 65536;
export const DEFAULT_MAX_DECODED_BYTES = 2 * 1024 ** 3;
/** A day: the loudness series are presized up to a day too (src/analysis/loudness.ts). */
export const DEFAULT_MAX_DECODED_SECONDS = 86_400;
