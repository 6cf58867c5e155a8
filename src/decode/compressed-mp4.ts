// MP4/M4A probe: walks top-level boxes by seeking (no full read), then the first sound track in moov.
import { EarmarkError } from '../errors/index.ts';
import { readRange } from './byte-reader.ts';
import { ascii, u16be, u32be, u64be } from './bytes.ts';

export interface Mp4Probe {
  encoding: string;
  sampleRate: number;
  channels: number;
  /** Media duration in output frames (mdhd, priming included), null when unset. */
  frames: number | null;
  /** moov before mdat: the decoder can stream; otherwise it must see the whole file. */
  moovFirst: boolean;
  /** A top-level box runs past the end of the file: the file was cut. */
  cut: boolean;
  /** Output frames the sample table (stts) spans, null without one: what the stream holds, whatever mdhd says. */
  tableFrames: number | null;
  /** Where the top-level boxes are, for feeding an index-at-the-end file index first (faststartInput). */
  layout: Mp4Layout;
}

/** Byte ranges of the boxes that move when the index is fed first. */
export interface Mp4Layout {
  firstMdat: number;
  moovStart: number;
  moovEnd: number;
}

/** moov holds only tables; anything bigger than this is not a plausible audio file. */
const MAX_MOOV_BYTES = 64 * 1024 * 1024;

interface Box {
  type: string;
  start: number;
  body: number;
  end: number;
}

function* boxes(b: Uint8Array, from: number, to: number): Generator<Box> {
  let o = from;
  while (o + 8 <= to) {
    let size = u32be(b, o);
    const type = ascii(b, o + 4, 4);
    let body = o + 8;
    if (size === 1) {
      size = u64be(b, o + 8);
      body = o + 16;
    } else if (size === 0) size = to - o;
    if (size < body - o || o + size > to) throw new EarmarkError('corrupt_file', `MP4 box ${type} overruns its parent`);
    yield { type, start: o, body, end: o + size };
    o += size;
  }
}

const child = (b: Uint8Array, parent: Box, type: string): Box | undefined => {
  for (const c of boxes(b, parent.body, parent.end)) if (c.type === type) return c;
  return undefined;
};

export async function probeMp4(path: string, fileBytes: number): Promise<Mp4Probe> {
  let moov: Uint8Array | null = null;
  let mdatSeen = false;
  const layout: Mp4Layout = { firstMdat: -1, moovStart: -1, moovEnd: -1 };
  let moovFirst = false;
  let cut = false;
  for (let o = 0; o + 8 <= fileBytes; ) {
    const h = await readRange(path, o, 16);
    let size = u32be(h, 0);
    const type = ascii(h, 4, 4);
    if (size === 1) size = u64be(h, 8);
    else if (size === 0) size = fileBytes - o;
    if (size < 8) throw new EarmarkError('corrupt_file', `MP4 box ${JSON.stringify(type)} has an invalid size`);
    if (type === 'mdat' && !mdatSeen) {
      mdatSeen = true;
      layout.firstMdat = o;
    }
    if (o + size > fileBytes) {
      cut = true;
      break;
    }
    if (type === 'moov') {
      if (size > MAX_MOOV_BYTES)
        throw new EarmarkError('corrupt_file', `MP4 moov box of ${size} bytes is implausibly large`);
      moov = await readRange(path, o, size);
      moovFirst = !mdatSeen;
      layout.moovStart = o;
      layout.moovEnd = o + size;
    }
    o += size;
  }
  if (!moov) throw new EarmarkError('corrupt_file', 'MP4 file has no moov box (truncated or not finished)');
  return { ...soundTrack(moov), moovFirst, cut, layout };
}

/**
 * The moov of an index-at-the-end file, its chunk offsets (stco/co64) moved as if it sat just
 * before the first mdat (as qt-faststart moves it). Fed that moov first and then the rest of the
 * file in order (the bytes from the first mdat up to the old moov, then those after it), the
 * streaming decoder reads the file in small pieces instead of holding and decoding it whole.
 */
export async function faststartMoov(path: string, layout: Mp4Layout): Promise<Uint8Array> {
  const moov = await readRange(path, layout.moovStart, layout.moovEnd - layout.moovStart);
  const shift = moov.length;
  const moved = (x: number) => (x >= layout.firstMdat && x < layout.moovStart ? x + shift : x);
  const view = new DataView(moov.buffer, moov.byteOffset, moov.byteLength);
  const patch = (parent: Box): void => {
    for (const c of boxes(moov, parent.body, parent.end)) {
      if (OFFSET_PARENTS.has(c.type)) patch(c);
      else if (c.type === 'stco' || c.type === 'co64') {
        const wide = c.type === 'co64';
        const count = u32be(moov, c.body + 4);
        const step = wide ? 8 : 4;
        if (c.body + 8 + count * step > c.end)
          throw new EarmarkError('corrupt_file', `MP4 ${c.type} declares more entries than it holds`);
        for (let i = 0, o = c.body + 8; i < count; i++, o += step) {
          const x = moved(wide ? u64be(moov, o) : u32be(moov, o));
          if (wide) {
            view.setUint32(o, Math.floor(x / 2 ** 32));
            view.setUint32(o + 4, x >>> 0);
          } else if (x > 0xffffffff)
            throw new EarmarkError(
              'unsupported_format',
              'MP4 with its index after 4 GiB of audio and 32-bit chunk offsets is not supported',
            );
          else view.setUint32(o, x);
        }
      }
    }
  };
  const [top] = boxes(moov, 0, moov.length);
  patch(top);
  return moov;
}

const OFFSET_PARENTS = new Set(['trak', 'mdia', 'minf', 'stbl']);

/** Sum of stts sample deltas (media timescale units), null without an stts. */
function sttsDuration(b: Uint8Array, stbl: Box): number | null {
  const stts = child(b, stbl, 'stts');
  if (!stts) return null;
  const count = u32be(b, stts.body + 4);
  if (stts.body + 8 + count * 8 > stts.end)
    throw new EarmarkError('corrupt_file', 'MP4 stts declares more entries than it holds');
  let total = 0;
  for (let i = 0, o = stts.body + 8; i < count; i++, o += 8) total += u32be(b, o) * u32be(b, o + 4);
  return total;
}

function soundTrack(b: Uint8Array): Omit<Mp4Probe, 'moovFirst' | 'cut' | 'layout'> {
  const [moov] = boxes(b, 0, b.length);
  for (const trak of boxes(b, moov.body, moov.end)) {
    if (trak.type !== 'trak') continue;
    const mdia = child(b, trak, 'mdia');
    const hdlr = mdia && child(b, mdia, 'hdlr');
    if (!mdia || !hdlr || ascii(b, hdlr.body + 8, 4) !== 'soun') continue;
    const mdhd = child(b, mdia, 'mdhd');
    const minf = child(b, mdia, 'minf');
    const stbl = minf && child(b, minf, 'stbl');
    const stsd = stbl && child(b, stbl, 'stsd');
    if (!mdhd || !stsd) throw new EarmarkError('corrupt_file', 'MP4 sound track lacks mdhd or stsd');
    const v1 = b[mdhd.body] === 1;
    const timescale = v1 ? u32be(b, mdhd.body + 20) : u32be(b, mdhd.body + 12);
    const duration = v1 ? u64be(b, mdhd.body + 24) : u32be(b, mdhd.body + 16);
    // stsd: full box header (4) + entry count (4), then the first sample entry.
    const [entry] = boxes(b, stsd.body + 8, stsd.end);
    if (!entry) throw new EarmarkError('corrupt_file', 'MP4 stsd has no sample entry');
    let channels = u16be(b, entry.body + 16);
    let sampleRate = u32be(b, entry.body + 24) >>> 16;
    const encoding = sampleEntryEncoding(b, entry);
    const asc = encoding === 'aac' ? audioSpecificConfig(b, entry) : null;
    if (asc?.channels) channels = asc.channels;
    if (asc?.sampleRate && !sampleRate) sampleRate = asc.sampleRate;
    if (encoding === 'opus') sampleRate = 48000;
    if (!channels || !sampleRate)
      throw new EarmarkError('corrupt_file', 'MP4 sound track declares no channels or sample rate');
    const known = timescale > 0 && duration > 0 && duration !== 0xffffffff;
    const table = stbl && timescale > 0 ? sttsDuration(b, stbl) : null;
    return {
      encoding,
      sampleRate,
      channels,
      frames: known ? Math.round((duration * sampleRate) / timescale) : null,
      tableFrames: table === null ? null : Math.round((table * sampleRate) / timescale),
    };
  }
  throw new EarmarkError('unsupported_format', 'MP4 file has no sound track');
}

function sampleEntryEncoding(b: Uint8Array, entry: Box): string {
  switch (entry.type) {
    case 'mp4a': {
      const oti = esdsObjectType(b, entry);
      if (oti === 0x6b || oti === 0x69) return 'mp3';
      return 'aac';
    }
    case 'alac':
      return 'alac';
    case 'fLaC':
      return 'flac';
    case 'Opus':
      return 'opus';
    default:
      throw new EarmarkError('unsupported_encoding', `MP4 audio codec ${JSON.stringify(entry.type)} is not supported`);
  }
}

/** Descriptors inside esds: tag, 1–4 length bytes (7 bits each), body. */
function descriptor(b: Uint8Array, o: number, end: number): { tag: number; body: number; end: number } | null {
  if (o >= end) return null;
  const tag = b[o++];
  let len = 0;
  for (let i = 0; i < 4 && o < end; i++) {
    const c = b[o++];
    len = (len << 7) | (c & 0x7f);
    if (!(c & 0x80)) break;
  }
  return { tag, body: o, end: Math.min(end, o + len) };
}

function decoderConfig(b: Uint8Array, entry: Box): { body: number; end: number } | null {
  // Audio sample entry body: 28 bytes before child boxes (QuickTime v1/v2 add more; those are rare for AAC).
  const version = u16be(b, entry.body + 8);
  const skip = version === 1 ? 44 : version === 2 ? 64 : 28;
  let esds: Box | undefined;
  for (const c of boxes(b, entry.body + skip, entry.end)) if (c.type === 'esds') esds = c;
  if (!esds) return null;
  const es = descriptor(b, esds.body + 4, esds.end);
  if (es?.tag !== 3) return null;
  const flags = b[es.body + 2];
  let o = es.body + 3;
  if (flags & 0x80) o += 2;
  if (flags & 0x40) o += 1 + b[o];
  if (flags & 0x20) o += 2;
  const dc = descriptor(b, o, es.end);
  return dc && dc.tag === 4 ? dc : null;
}

function esdsObjectType(b: Uint8Array, entry: Box): number | null {
  const dc = decoderConfig(b, entry);
  return dc ? b[dc.body] : null;
}

const ASC_RATES = [96000, 88200, 64000, 48000, 44100, 32000, 24000, 22050, 16000, 12000, 11025, 8000, 7350];

function audioSpecificConfig(b: Uint8Array, entry: Box): { sampleRate: number; channels: number } | null {
  const dc = decoderConfig(b, entry);
  if (!dc) return null;
  const dsi = descriptor(b, dc.body + 13, dc.end);
  if (dsi?.tag !== 5 || dsi.end - dsi.body < 2) return null;
  const bits = u16be(b, dsi.body);
  if (bits >> 11 === 31) return null; // escaped object type: leave it to the sample entry
  const rateIndex = (bits >> 7) & 15;
  return { sampleRate: ASC_RATES[rateIndex] ?? 0, channels: (bits >> 3) & 15 };
}
