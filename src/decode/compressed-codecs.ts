// Loads one per-format decoder package behind one minimal local interface. We use the
// per-format packages (not the audio-decode front door) because only they return the codec's
// error list, and they do not fold identical stereo channels to mono.

export interface CodecOutput {
  channelData: Float32Array[];
  sampleRate: number;
  /** Valid frames when the arrays are longer than the output. */
  samplesDecoded?: number;
  errors?: readonly { message: string }[];
  /** Samples are already integer / 2^(bits-1) (our FLAC decoder): OutputCheck does not requantize them. */
  exactScale?: boolean;
  /** Every |sample| is at most 1: OutputCheck skips its level check. */
  withinFullScale?: boolean;
}

export interface Codec {
  decode(data: Uint8Array): CodecOutput | Promise<CodecOutput>;
  flush?(): CodecOutput | Promise<CodecOutput>;
  free(): void;
}

/** The decoder packages by the name a probe gives (Probe.codec). */
const CODECS = {
  flac: async () => new (await import('./flac/codec.ts')).FlacCodec(),
  oggflac: async () => (await import('@audio/decode-flac')).decoder(),
  mp3: async () => (await import('@audio/decode-mp3')).decoder(),
  mp4: async () => (await import('@audio/decode-mp4')).decoder(),
  aac: async () => (await import('@audio/decode-aac')).decoder(),
  vorbis: async () => (await import('@audio/decode-vorbis')).decoder(),
  opus: async () => (await import('@audio/decode-opus')).decoder(),
  webm: async () => (await import('@audio/decode-webm')).decoder(),
  caf: async () => (await import('@audio/decode-caf')).decoder(),
} satisfies Record<string, () => Promise<Codec>>;

export type CodecPackage = keyof typeof CODECS;

export function loadCodec(name: CodecPackage): Promise<Codec> {
  return CODECS[name]();
}
