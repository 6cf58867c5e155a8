// The PCM contract between decoders and meters. The analysis layer owns it (it imports nothing
// from decode); decoders produce it.

import type { BlockEnvelope } from './envelope.ts';

/** Planar float samples, nominal full scale +/-1.0. All channels hold `frames` samples. */
export interface PcmBlock {
  readonly channelData: readonly Float32Array[];
  readonly frames: number;
  /** Per-chunk extremes, attached by the runner so meters share one pass; absent from decoders. */
  readonly envelope?: BlockEnvelope;
}

/**
 * Speaker roles. Names follow common broadcast shorthand. `M` is a mono channel.
 * `Ls`/`Rs` are the surround pair of a 5.1 layout (WAVE back or side positions),
 * `Lss`/`Rss` side and `Lrs`/`Rrs` rear surrounds of 7.1, `Lw`/`Rw` front wides,
 * `Lsc`/`Rsc` screen edges, `T*` the upper layer (`Tsl`/`Tsr` top sides), `B*` the bottom
 * layer, `LFE2` the second LFE of 22.2. Each role's nominal ITU-R BS.2051 position is in
 * layouts.ts.
 */
export type ChannelLabel =
  | 'M'
  | 'L'
  | 'R'
  | 'C'
  | 'LFE'
  | 'Ls'
  | 'Rs'
  | 'Lss'
  | 'Rss'
  | 'Lrs'
  | 'Rrs'
  | 'Lc'
  | 'Rc'
  | 'Cs'
  | 'Tc'
  | 'Tfl'
  | 'Tfc'
  | 'Tfr'
  | 'Tbl'
  | 'Tbc'
  | 'Tbr'
  | 'Lw'
  | 'Rw'
  | 'Lsc'
  | 'Rsc'
  | 'Tsl'
  | 'Tsr'
  | 'Bfl'
  | 'Bfc'
  | 'Bfr'
  | 'LFE2'
  | 'unknown';

/** What meters need to know about the stream before the first block. */
export interface StreamInfo {
  readonly sampleRate: number;
  readonly channels: number;
  readonly channelLabels: readonly ChannelLabel[];
  /** Frames the container declares, when it does: lets meters size per-interval series once. */
  readonly expectedFrames?: number;
}

/** A streaming meter: feed blocks in order, then read the result once. */
export interface Meter<Result> {
  push(block: PcmBlock): void;
  result(): Result;
}

/** Default channel roles when the file says nothing (WAVE/SMPTE order for 1, 2, 6 and 8 channels). */
export function defaultChannelLabels(channels: number): ChannelLabel[] {
  switch (channels) {
    case 1:
      return ['M'];
    case 2:
      return ['L', 'R'];
    case 3:
      return ['L', 'R', 'C'];
    case 4:
      return ['L', 'R', 'Ls', 'Rs'];
    case 5:
      return ['L', 'R', 'C', 'Ls', 'Rs'];
    case 6:
      return ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'];
    case 8:
      return ['L', 'R', 'C', 'LFE', 'Lrs', 'Rrs', 'Lss', 'Rss'];
    default:
      return Array.from({ length: channels }, () => 'unknown' as const);
  }
}
