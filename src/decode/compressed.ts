// STUB: replaced by the compressed-format decoder (audio-decode). Contract only.
import type { Container, DecodeOptions, DecodedAudio } from './types.ts';
import { EarmarkError } from '../errors/index.ts';

export async function openCompressed(path: string, container: Container, _options: DecodeOptions = {}): Promise<DecodedAudio> {
  throw new EarmarkError('unsupported_format', `decoding ${container} is not implemented yet (${path})`);
}
