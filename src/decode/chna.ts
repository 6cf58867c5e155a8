// The BW64 `chna` chunk (ITU-R BS.2088; IDs of ITU-R BS.2076): which ADM track each file track
// carries. A track whose ID is an ITU-R BS.2094 common-definition loudspeaker gets its role;
// anything else (objects, HOA, custom definitions that only the axml chunk explains) is 'unknown'.
//
// Layout, as ebu/libbw64 parser.hpp reads it: numTracks u16, numUIDs u16, then numUIDs entries of
// 40 bytes: trackIndex u16 (1-based), UID char[12], trackRef char[14], packRef char[11], 1 pad byte.

import type { ChannelLabel } from '../analysis/audio.ts';
import { u16le } from './bytes.ts';
import type { DecodeWarning } from './types.ts';

const HEADER_BYTES = 4;
const ENTRY_BYTES = 40;
const TRACK_REF_OFFSET = 14;
const TRACK_REF_BYTES = 14;
/** Entries read at most: the chunk is read bounded whatever numUIDs claims (160 KiB). */
export const MAX_CHNA_ENTRIES = 4096;
export const MAX_CHNA_READ_BYTES = HEADER_BYTES + ENTRY_BYTES * MAX_CHNA_ENTRIES;

/**
 * BS.2094 common DirectSpeakers audioChannelFormats AC_0001xxxx by xxxx, as listed (with their
 * BS.2051 speaker labels) in ebu/libadm resources/common_definitions.xml; the common track
 * formats AT_0001xxxx_01 carry the same xxxx (same file). M+045/M-045 (0x26/0x27) have no role
 * of ours and read as 'unknown'.
 */
const COMMON_CHANNELS: Readonly<Record<number, ChannelLabel>> = {
  0x01: 'L', // M+030
  0x02: 'R', // M-030
  0x03: 'C', // M+000
  0x04: 'LFE',
  0x05: 'Ls', // M+110
  0x06: 'Rs', // M-110
  0x07: 'Lc', // M+022
  0x08: 'Rc', // M-022
  0x09: 'Cs', // M+180
  0x0a: 'Lss', // M+090
  0x0b: 'Rss', // M-090
  0x0c: 'Tc', // T+000
  0x0d: 'Tfl', // U+030
  0x0e: 'Tfc', // U+000
  0x0f: 'Tfr', // U-030
  0x10: 'Tbl', // U+110
  0x11: 'Tbc', // U+180
  0x12: 'Tbr', // U-110
  0x13: 'Tsl', // U+090
  0x14: 'Tsr', // U-090
  0x15: 'Bfc', // B+000
  0x16: 'Bfl', // B+045
  0x17: 'Bfr', // B-045
  0x18: 'Lw', // M+060
  0x19: 'Rw', // M-060
  0x1a: 'Lrs', // M+135, diffuse
  0x1b: 'Rrs', // M-135, diffuse
  0x1c: 'Lrs', // M+135
  0x1d: 'Rrs', // M-135
  0x1e: 'Tbl', // U+135
  0x1f: 'Tbr', // U-135
  0x20: 'LFE', // LFE1 (LFEL)
  0x21: 'LFE2', // LFE2 (LFER)
  0x22: 'Tfl', // U+045
  0x23: 'Tfr', // U-045
  0x24: 'Lsc', // M+SC
  0x25: 'Rsc', // M-SC
  0x28: 'Tbc', // UH+180
};

/** BS.2076 IDs: typeLabel 0001 (DirectSpeakers), index 0001-0FFF reserved for common definitions. */
const DIRECT_SPEAKERS = 0x0001;
const LAST_COMMON_INDEX = 0x0fff;
// AT_yyyyxxxx_zz (audioTrackFormat) or AC_yyyyxxxx_00 (a channel format referenced directly).
const TRACK_REF = /^A[TC]_([0-9a-fA-F]{4})([0-9a-fA-F]{4})_[0-9a-fA-F]{2}$/;

export interface ChnaTrack {
  /** 1-based track index in the file. */
  trackIndex: number;
  trackRef: string;
}

function ascii(b: Uint8Array, offset: number, length: number): string {
  let text = '';
  for (let i = offset; i < offset + length; i++) {
    if (b[i] === 0) break;
    text += String.fromCharCode(b[i]);
  }
  return text;
}

/** The entries of a chna body (read bounded by the caller); null when it holds none. */
export function parseChna(body: Uint8Array): ChnaTrack[] | null {
  if (body.length < HEADER_BYTES) return null;
  const declared = u16le(body, 2);
  const entries = Math.min(declared, MAX_CHNA_ENTRIES, Math.floor((body.length - HEADER_BYTES) / ENTRY_BYTES));
  const tracks: ChnaTrack[] = [];
  for (let i = 0; i < entries; i++) {
    const o = HEADER_BYTES + i * ENTRY_BYTES;
    tracks.push({ trackIndex: u16le(body, o), trackRef: ascii(body, o + TRACK_REF_OFFSET, TRACK_REF_BYTES) });
  }
  return tracks.length > 0 ? tracks : null;
}

/** The role of a common-definition loudspeaker track reference; null for anything else. */
export function roleOfTrackRef(trackRef: string): ChannelLabel | null {
  const match = TRACK_REF.exec(trackRef);
  if (!match) return null;
  const type = Number.parseInt(match[1], 16);
  const index = Number.parseInt(match[2], 16);
  if (type !== DIRECT_SPEAKERS || index > LAST_COMMON_INDEX) return null;
  return COMMON_CHANNELS[index] ?? null;
}

const SHOWN_UNIDENTIFIED = 8;

/** One role per channel: a track's first entry decides; unlisted and unidentified channels are 'unknown', with a warning. */
export function labelsFromChna(
  tracks: readonly ChnaTrack[],
  channels: number,
): { labels: ChannelLabel[]; warnings: DecodeWarning[] } {
  const refs: (string | null)[] = Array.from({ length: channels }, () => null);
  for (const t of tracks) {
    if (t.trackIndex >= 1 && t.trackIndex <= channels && refs[t.trackIndex - 1] === null)
      refs[t.trackIndex - 1] = t.trackRef;
  }
  const labels: ChannelLabel[] = [];
  const unidentified: string[] = [];
  refs.forEach((ref, c) => {
    const role = ref === null ? null : roleOfTrackRef(ref);
    labels.push(role ?? 'unknown');
    if (role === null) unidentified.push(`${c + 1} (${ref === null ? 'not listed' : JSON.stringify(ref)})`);
  });
  const warnings: DecodeWarning[] = [];
  if (unidentified.length > 0) {
    const more =
      unidentified.length > SHOWN_UNIDENTIFIED ? ` and ${unidentified.length - SHOWN_UNIDENTIFIED} more` : '';
    warnings.push({
      code: 'channel_unidentified',
      count: unidentified.length,
      message: `chna chunk: channel ${unidentified.slice(0, SHOWN_UNIDENTIFIED).join(', ')}${more} is not a BS.2094 common loudspeaker; read as 'unknown' (weight 1.0)`,
    });
  }
  return { labels, warnings };
}
