// The formats `npm run bench:decoders` measures, and the shape of an outside candidate module.

/** Each format's file, encoded once from the same 44.1 kHz stereo source (ffmpeg arguments after `-i SRC`). */
export const BENCH_FORMATS = {
  flac16: { file: 'flac16.flac', encode: ['-c:a', 'flac', '-sample_fmt', 's16'] },
  flac24: { file: 'flac24.flac', encode: ['-c:a', 'flac', '-sample_fmt', 's32', '-bits_per_raw_sample', '24'] },
  mp3: { file: 'mp3-320k.mp3', encode: ['-c:a', 'libmp3lame', '-b:a', '320k'] },
  m4a: { file: 'aac-256k.m4a', encode: ['-c:a', 'aac', '-b:a', '256k', '-movflags', '+faststart'] },
  adts: { file: 'aac-256k.aac', encode: ['-c:a', 'aac', '-b:a', '256k', '-f', 'adts'] },
  opus: { file: 'opus-160k.opus', encode: ['-c:a', 'libopus', '-b:a', '160k'] },
  vorbis: { file: 'vorbis-q6.ogg', encode: ['-c:a', 'libvorbis', '-q:a', '6'] },
} as const;

export type BenchFormat = keyof typeof BENCH_FORMATS;

export function isBenchFormat(name: string | undefined): name is BenchFormat {
  return name !== undefined && Object.hasOwn(BENCH_FORMATS, name);
}

/**
 * A decoder from outside the project (installed elsewhere, e.g. /tmp), measured beside ours:
 * BENCH_DECODER_CANDIDATES names a module whose default export is a list of these.
 */
export interface Candidate {
  name: string;
  formats: readonly string[];
  /** Decodes the whole file; resolves to the frames decoded per channel. */
  decode(path: string): Promise<number>;
}

export function isCandidateList(value: unknown): value is Candidate[] {
  return (
    Array.isArray(value) &&
    value.every(
      (c: unknown) =>
        typeof c === 'object' &&
        c !== null &&
        'name' in c &&
        typeof c.name === 'string' &&
        'formats' in c &&
        Array.isArray(c.formats) &&
        'decode' in c &&
        typeof c.decode === 'function',
    )
  );
}
