// AIFF and AIFF-C: one chunk parser, told apart by the FORM type.
import { parseAiff } from '../aiff.ts';
import { hasAscii } from '../bytes.ts';
import type { Decoder } from '../decoder.ts';
import { pcmDecoder } from '../pcm/decoder.ts';

const form = (formType: string): Decoder =>
  pcmDecoder((head) => hasAscii(head, 0, 'FORM') && hasAscii(head, 8, formType), parseAiff);

export const aiff = form('AIFF');
export const aifc = form('AIFC');
