// RIFF/WAVE, RF64 and BW64 (EBU Tech 3306, ITU-R BS.2088): one chunk parser, told apart by the
// first four bytes.
import { hasAscii } from '../bytes.ts';
import type { Decoder } from '../decoder.ts';
import { pcmDecoder } from '../pcm/decoder.ts';
import { parseRiff } from '../riff.ts';

const wave = (riffId: string): Decoder =>
  pcmDecoder((head) => hasAscii(head, 8, 'WAVE') && hasAscii(head, 0, riffId), parseRiff);

export const wav = wave('RIFF');
export const rf64 = wave('RF64');
export const bw64 = wave('BW64');
