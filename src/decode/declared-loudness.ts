// Loudness a WAVE file declares about itself: the BWF bext version 2 fields (EBU Tech 3285 v2)
// and the iXML LOUDNESS block. Both are read from a bounded head of the chunk; anything odd is
// a warning and the field is left unset, never a guess.
import { i16le, u16le } from './bytes.ts';
import type { DecodeWarning, DeclaredLoudness } from './types.ts';

/** EBU Tech 3285: Description 256 + Originator 32 + OriginatorReference 32 + OriginationDate 10 + OriginationTime 8. */
export const BEXT_TIME_REFERENCE_OFFSET = 338;
/** EBU Tech 3285: Version (WORD) follows the 64-bit TimeReference. */
export const BEXT_VERSION_OFFSET = 346;
/** EBU Tech 3285 v2: five int16 fields after the 64-byte UMID (348 + 64), each value x 100. */
export const BEXT_LOUDNESS_OFFSET = 412;
/** Bytes of the bext chunk this reader needs: up to the end of MaxShortTermLoudness. */
export const BEXT_READ_BYTES = BEXT_LOUDNESS_OFFSET + 10;
/** EBU Tech 3285 v2: "not set" for a loudness field. */
export const BEXT_LOUDNESS_NOT_SET = 0x7fff;
/** iXML is text; more than this is not a metadata chunk we read. */
export const MAX_IXML_BYTES = 1024 * 1024;

const FIELDS = [
  'integratedLufs',
  'loudnessRangeLu',
  'maxTruePeakDbtp',
  'maxMomentaryLufs',
  'maxShortTermLufs',
] as const;
export type DeclaredLoudnessField = (typeof FIELDS)[number];
export const DECLARED_LOUDNESS_FIELDS: readonly DeclaredLoudnessField[] = FIELDS;

export interface MetadataReading {
  declared: DeclaredLoudness | null;
  warnings: DecodeWarning[];
}

const warning = (message: string): DecodeWarning => ({ code: 'unreadable_metadata', message });
const anySet = (d: DeclaredLoudness) => FIELDS.some((f) => d[f] !== null);

/**
 * The bext loudness fields from `body`, the chunk's first bytes as read (at most BEXT_READ_BYTES;
 * fewer when the chunk or the file is shorter). `chunkBytes` is the size the chunk header declares.
 */
export function parseBextLoudness(body: Uint8Array, chunkBytes: number): MetadataReading {
  if (body.length < BEXT_VERSION_OFFSET + 2) {
    const why =
      chunkBytes < BEXT_VERSION_OFFSET + 2
        ? `bext chunk is ${chunkBytes} bytes, too short to hold its Version field (bytes 346-347)`
        : `the file ends inside the bext chunk after ${body.length} of its ${chunkBytes} bytes`;
    return { declared: null, warnings: [warning(`${why}: its time reference and loudness are not read`)] };
  }
  const version = u16le(body, BEXT_VERSION_OFFSET);
  if (version < 2) return { declared: null, warnings: [] }; // versions 0 and 1 carry no loudness
  if (body.length < BEXT_READ_BYTES) {
    return {
      declared: null,
      warnings: [
        warning(
          `bext chunk declares version ${version} but ${chunkBytes < BEXT_READ_BYTES ? `is ${chunkBytes} bytes` : `the file ends after ${body.length} of its bytes`}, too short for the loudness fields at bytes 412-421: not read`,
        ),
      ],
    };
  }
  const value = (i: number): number | null => {
    const raw = i16le(body, BEXT_LOUDNESS_OFFSET + 2 * i);
    return raw === BEXT_LOUDNESS_NOT_SET ? null : raw / 100;
  };
  const declared: DeclaredLoudness = {
    source: 'bext',
    integratedLufs: value(0),
    loudnessRangeLu: value(1),
    maxTruePeakDbtp: value(2),
    maxMomentaryLufs: value(3),
    maxShortTermLufs: value(4),
  };
  return { declared: anySet(declared) ? declared : null, warnings: [] };
}

/**
 * Element names inside <LOUDNESS> (iXML 2.x, from memory: not checked against the specification
 * text). MAX_MOMENTARY and MAX_SHORT_TERM are shorter spellings seen in other readers.
 */
const IXML_ELEMENTS: Record<DeclaredLoudnessField, readonly string[]> = {
  integratedLufs: ['LOUDNESS_VALUE'],
  loudnessRangeLu: ['LOUDNESS_RANGE'],
  maxTruePeakDbtp: ['MAX_TRUE_PEAK_LEVEL'],
  maxMomentaryLufs: ['MAX_MOMENTARY_LOUDNESS', 'MAX_MOMENTARY'],
  maxShortTermLufs: ['MAX_SHORT_TERM_LOUDNESS', 'MAX_SHORT_TERM'],
};
/** A plain decimal, optionally followed by its unit. */
const NUMBER = /^([+-]?(?:\d{1,4}(?:\.\d{0,6})?|\.\d{1,6}))\s*(?:LUFS|LKFS|LU|dBTP|dB)?$/i;
/** The range bext can carry (int16 / 100): anything beyond is not a loudness figure. */
const MAX_ABS_VALUE = 327.67;

/** iXML "may be any unicode encoding": a byte-order mark picks UTF-16, otherwise UTF-8. */
function ixmlText(bytes: Uint8Array): string {
  if (bytes[0] === 0xff && bytes[1] === 0xfe) return new TextDecoder('utf-16le').decode(bytes.subarray(2));
  if (bytes[0] === 0xfe && bytes[1] === 0xff) return new TextDecoder('utf-16be').decode(bytes.subarray(2));
  return new TextDecoder('utf-8').decode(bytes);
}

/** Text with XML comments removed (so a commented-out block is not read); linear. */
function withoutComments(text: string): string {
  let out = '';
  let at = 0;
  for (;;) {
    const open = text.indexOf('<!--', at);
    if (open < 0) return out + text.slice(at);
    out += text.slice(at, open);
    const close = text.indexOf('-->', open + 4);
    if (close < 0) return out;
    at = close + 3;
  }
}

/** The text of the first <LOUDNESS ...>...</LOUDNESS>, or null. */
function loudnessBlock(text: string): string | null {
  let at = 0;
  for (;;) {
    const open = text.indexOf('<LOUDNESS', at);
    if (open < 0) return null;
    const next = text[open + 9];
    if (next === '>' || next === ' ' || next === '\t' || next === '\r' || next === '\n') {
      const start = text.indexOf('>', open);
      const end = text.indexOf('</LOUDNESS>', start);
      return start < 0 || end < 0 ? null : text.slice(start + 1, end);
    }
    at = open + 9; // <LOUDNESS_VALUE> outside a block, or another element
  }
}

/** The inner text of <name>...</name> in `block`, or null when absent or empty (<name/> too). */
function elementText(block: string, name: string): string | null {
  const open = block.indexOf(`<${name}>`);
  if (open < 0) return null;
  const start = open + name.length + 2;
  const end = block.indexOf(`</${name}>`, start);
  if (end < 0) return null;
  const inner = block.slice(start, end).trim();
  return inner === '' ? null : inner;
}

/** The LOUDNESS block of an iXML chunk's bytes (the whole chunk, at most MAX_IXML_BYTES). */
export function parseIxmlLoudness(bytes: Uint8Array): MetadataReading {
  const block = loudnessBlock(withoutComments(ixmlText(bytes)));
  if (block === null) return { declared: null, warnings: [] };
  const warnings: DecodeWarning[] = [];
  const declared: DeclaredLoudness = {
    source: 'ixml',
    integratedLufs: null,
    loudnessRangeLu: null,
    maxTruePeakDbtp: null,
    maxMomentaryLufs: null,
    maxShortTermLufs: null,
  };
  for (const field of FIELDS) {
    for (const name of IXML_ELEMENTS[field]) {
      const inner = elementText(block, name);
      if (inner === null) continue;
      const match = NUMBER.exec(inner);
      const value = match ? Number(match[1]) : Number.NaN;
      if (Number.isFinite(value) && Math.abs(value) <= MAX_ABS_VALUE) declared[field] = value;
      else warnings.push(warning(`iXML ${name} "${inner.slice(0, 40)}" is not a loudness figure: ignored`));
      break;
    }
  }
  return { declared: anySet(declared) ? declared : null, warnings };
}
