// Container detection from leading bytes only; file names are never trusted. The signatures are
// the registry entries' own (registry.ts), tried in registry order.
import { id3v2Length } from './bytes.ts';
import { DECODERS } from './registry.ts';
import type { Container } from './types.ts';

export { id3v2Length } from './bytes.ts';

/** Bytes openAudioFile reads for detection (enough to see a second MPEG/ADTS frame header). */
export const DETECT_HEAD_BYTES = 4096;

const isContainer = (key: string): key is Container => Object.hasOwn(DECODERS, key);
const CONTAINERS = Object.keys(DECODERS).filter(isContainer);

/** Container by magic bytes, or null when none matches. */
export function detectContainer(head: Uint8Array): Container | null {
  const found = CONTAINERS.find((c) => DECODERS[c].detect(head));
  if (found) return found;
  const tagBytes = id3v2Length(head);
  if (tagBytes > 0) {
    if (head.length < tagBytes + 4) return null; // caller reads past the tag and asks again
    return detectAfterId3(head.subarray(tagBytes));
  }
  return null;
}

/** What follows an ID3v2 tag: another tag, or a format a tag may precede. */
export function detectAfterId3(rest: Uint8Array): Container | null {
  if (id3v2Length(rest) > 0) return detectContainer(rest);
  return CONTAINERS.find((c) => DECODERS[c].detectAfterId3?.(rest) ?? false) ?? null;
}
