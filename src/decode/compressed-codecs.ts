// Loads one per-format decoder package behind one minimal local interface. We use the
// per-format packages (not the audio-decode front door) because only they return the codec's
// error list, and they do not fold identical stereo channels to mono.
import type { CodecPackage } from './compressed-probe.ts';

export interface CodecOutput {
  channelData: Float32Array[];
  sampleRate: number;
  /** Valid frames when the arrays are longer than the output. */
  samplesDecoded?: number;
  errors?: readonly { message: string }[];
}

export interface Codec {
  decode(data: Uint8Array): CodecOutput | Promise<CodecOutput>;
  flush?(): CodecOutput | Promise<CodecOutput>;
  free(): void;
}

export async function loadCodec(name: CodecPackage): Promise<Codec> {
  switch (name) {
    case 'flac': return (await import('@audio/decode-flac')).decoder();
    case 'mp3': return (await import('@audio/decode-mp3')).decoder();
    case 'mp4': return (await import('@audio/decode-mp4')).decoder();
    case 'aac': return (await import('@audio/decode-aac')).decoder();
    case 'vorbis': return (await import('@audio/decode-vorbis')).decoder();
    case 'opus': return (await import('@audio/decode-opus')).decoder();
    case 'webm': return (await import('@audio/decode-webm')).decoder();
    case 'caf': return (await import('@audio/decode-caf')).decoder();
  }
}
