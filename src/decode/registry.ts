// Every container we decode, one entry each. Adding a format: write formats/<name>.ts exporting
// a Decoder and add it here; Container, detection and the report schema follow from this object.
import type { Decoder } from './decoder.ts';
import { aac } from './formats/aac.ts';
import { aifc, aiff } from './formats/aiff.ts';
import { caf } from './formats/caf.ts';
import { flac } from './formats/flac.ts';
import { m4a } from './formats/m4a.ts';
import { mp3 } from './formats/mp3.ts';
import { ogg } from './formats/ogg.ts';
import { webm } from './formats/webm.ts';
import { bw64, rf64, wav } from './formats/wave.ts';

/**
 * In detection order: the first entry whose signature matches names the file. The fixed-position
 * signatures come first; ADTS before MPEG audio, whose loose sync after an ID3v2 tag also
 * matches an ADTS header.
 */
export const DECODERS = { wav, rf64, bw64, aiff, aifc, flac, ogg, webm, caf, m4a, aac, mp3 } satisfies Record<
  string,
  Decoder
>;
