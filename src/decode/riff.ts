// RIFF/WAVE, RF64 and BW64 chunk parsing: fmt, ds64, bext and where the data chunk lies.
// Sample conversion and streaming are in pcm/.
import type { ChannelLabel } from '../analysis/audio.ts';
import { defaultChannelLabels } from '../analysis/audio.ts';
import { EarmarkError } from '../errors/index.ts';
import type { ByteReader } from './byte-reader.ts';
import { labelsFromChna, MAX_CHNA_READ_BYTES, parseChna, type ChnaTrack } from './chna.ts';
import { fourcc, u16le, u32le, u64le } from './bytes.ts';
import {
  BEXT_READ_BYTES,
  BEXT_TIME_REFERENCE_OFFSET,
  MAX_IXML_BYTES,
  type MetadataReading,
  parseBextLoudness,
  parseIxmlLoudness,
} from './declared-loudness.ts';
import { checkStreamNumbers } from './limits.ts';
import type { SampleLayout } from './pcm/convert.ts';
import type { PcmPlan } from './pcm/stream.ts';
import type { AudioFormat, Container, DeclaredLoudness, DecodeWarning } from './types.ts';

const WAVE_FORMAT_PCM = 0x0001;
const WAVE_FORMAT_IEEE_FLOAT = 0x0003;
const WAVE_FORMAT_EXTENSIBLE = 0xfffe;
// Microsoft mmreg.h format tags, named only so the error says what the file is.
const KNOWN_TAGS: Record<number, string> = {
  0x0002: 'Microsoft ADPCM',
  0x0006: 'A-law',
  0x0007: 'mu-law',
  0x0011: 'IMA ADPCM',
  0x0031: 'GSM 6.10',
  0x0050: 'MPEG audio',
  0x0055: 'MPEG layer III',
  0x00ff: 'AAC',
  0x2000: 'AC-3',
  0x2001: 'DTS',
};
// KSDATAFORMAT_SUBTYPE_* GUID bytes 2..15 as stored (little-endian Data1..Data3), ksmedia.h.
const KSDATAFORMAT_TAIL = [0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71];

// dwChannelMask bit order (ksmedia.h SPEAKER_*): FL FR FC LFE BL BR FLC FRC BC SL SR TC TFL TFC TFR TBL TBC TBR.
const SPEAKER_BACK_PAIR = 0x30;
const SPEAKER_SIDE_PAIR = 0x600;

/** Labels for the first `channels` set bits of a WAVE_FORMAT_EXTENSIBLE mask; extra channels are 'unknown'. */
export function labelsFromChannelMask(mask: number, channels: number): ChannelLabel[] {
  if (mask === 0) return defaultChannelLabels(channels);
  if (mask === 0x4 && channels === 1) return ['M'];
  const hasBack = (mask & SPEAKER_BACK_PAIR) !== 0;
  const hasSide = (mask & SPEAKER_SIDE_PAIR) !== 0;
  const byBit: ChannelLabel[] = [
    'L',
    'R',
    'C',
    'LFE',
    hasSide ? 'Lrs' : 'Ls',
    hasSide ? 'Rrs' : 'Rs',
    'Lc',
    'Rc',
    'Cs',
    hasBack ? 'Lss' : 'Ls',
    hasBack ? 'Rss' : 'Rs',
    'Tc',
    'Tfl',
    'Tfc',
    'Tfr',
    'Tbl',
    'Tbc',
    'Tbr',
  ];
  const labels: ChannelLabel[] = [];
  for (let bit = 0; bit < 32 && labels.length < channels; bit++) {
    if (mask & (1 << bit)) labels.push(byBit[bit] ?? 'unknown');
  }
  while (labels.length < channels) labels.push('unknown');
  return labels;
}

interface WaveFmt {
  layout: SampleLayout;
  encoding: string;
  channels: number;
  sampleRate: number;
  blockAlign: number;
  bitsPerSample: number;
  channelMask: number | null;
}

function parseFmt(b: Uint8Array): WaveFmt {
  if (b.length < 16) throw new EarmarkError('corrupt_file', `fmt chunk is ${b.length} bytes, shorter than 16`);
  let tag = u16le(b, 0);
  const channels = u16le(b, 2);
  const sampleRate = u32le(b, 4);
  const blockAlign = u16le(b, 12);
  const containerBits = u16le(b, 14);
  let bitsPerSample = containerBits;
  let channelMask: number | null = null;
  checkStreamNumbers('fmt chunk', channels, sampleRate);
  if (tag === WAVE_FORMAT_EXTENSIBLE) {
    if (b.length < 40 || u16le(b, 16) < 22)
      throw new EarmarkError('corrupt_file', 'WAVE_FORMAT_EXTENSIBLE fmt chunk is shorter than 40 bytes');
    const validBits = u16le(b, 18);
    if (validBits > containerBits)
      throw new EarmarkError('corrupt_file', `valid bits ${validBits} exceed container bits ${containerBits}`);
    if (validBits > 0) bitsPerSample = validBits;
    channelMask = u32le(b, 20);
    tag = u16le(b, 24);
    if (KSDATAFORMAT_TAIL.some((v, i) => b[26 + i] !== v))
      throw new EarmarkError(
        'unsupported_encoding',
        'WAVE_FORMAT_EXTENSIBLE sub-format GUID is not a known PCM or float GUID',
      );
  }
  if (tag !== WAVE_FORMAT_PCM && tag !== WAVE_FORMAT_IEEE_FLOAT) {
    const name = KNOWN_TAGS[tag] ? ` (${KNOWN_TAGS[tag]})` : '';
    throw new EarmarkError(
      'unsupported_encoding',
      `WAVE format tag 0x${tag.toString(16).padStart(4, '0')}${name} is not supported; only PCM and IEEE float are`,
    );
  }
  if (containerBits === 0) throw new EarmarkError('corrupt_file', 'fmt chunk declares 0 bits per sample');
  const bytesPerSample = Math.ceil(containerBits / 8);
  if (blockAlign !== channels * bytesPerSample) {
    throw new EarmarkError(
      'corrupt_file',
      `block align ${blockAlign} does not match ${channels} channels of ${containerBits}-bit samples`,
    );
  }
  if (tag === WAVE_FORMAT_IEEE_FLOAT) {
    if (containerBits !== 32 && containerBits !== 64)
      throw new EarmarkError('unsupported_encoding', `${containerBits}-bit IEEE float is not supported`);
    return {
      layout: { kind: 'float', bytesPerSample: bytesPerSample as 4 | 8, bigEndian: false },
      encoding: `pcm_f${containerBits}le`,
      channels,
      sampleRate,
      blockAlign,
      bitsPerSample,
      channelMask,
    };
  }
  if (bytesPerSample > 4)
    throw new EarmarkError('unsupported_encoding', `${containerBits}-bit integer PCM is not supported`);
  const kind = bytesPerSample === 1 ? 'uint8' : 'int';
  const encoding = bytesPerSample === 1 ? 'pcm_u8' : `pcm_s${bytesPerSample * 8}le`;
  return {
    layout: { kind, bytesPerSample: bytesPerSample as 1 | 2 | 3 | 4, bigEndian: false },
    encoding,
    channels,
    sampleRate,
    blockAlign,
    bitsPerSample,
    channelMask,
  };
}

const KNOWN_CHUNKS = new Set([
  'data',
  'fmt ',
  'bext',
  'LIST',
  'fact',
  'cue ',
  'JUNK',
  'junk',
  'PAD ',
  'iXML',
  'axml',
  'chna',
  'ds64',
  'smpl',
  'inst',
  'id3 ',
  'ID3 ',
  'acid',
  'PEAK',
  'levl',
  'umid',
  'cart',
  'list',
  'FLLR',
  'minf',
  'elm1',
  'regn',
  'ovwf',
]);
const isPrintableId = (b: Uint8Array, o: number): boolean => {
  for (let i = o; i < o + 4; i++) if (b[i] < 0x20 || b[i] > 0x7e) return false;
  return true;
};

/** After an odd-sized chunk: true when the pad byte is missing (the next chunk id starts right away). */
async function padMissing(reader: ByteReader): Promise<boolean> {
  const p = await reader.peek(5);
  if (p.length < 5) return false;
  if (KNOWN_CHUNKS.has(fourcc(p, 1))) return false;
  if (KNOWN_CHUNKS.has(fourcc(p, 0))) return true;
  return !isPrintableId(p, 1) && isPrintableId(p, 0);
}

interface Ds64 {
  dataBytes: number;
  sampleCount: number;
  table: Map<string, number>;
}

function parseDs64(b: Uint8Array): Ds64 {
  // EBU Tech 3306 ds64: riffSize, dataSize, sampleCount (64-bit each), tableLength, table.
  if (b.length < 28) throw new EarmarkError('corrupt_file', `ds64 chunk is ${b.length} bytes, shorter than 28`);
  const table = new Map<string, number>();
  const entries = u32le(b, 24);
  for (let i = 0, o = 28; i < entries && o + 12 <= b.length; i++, o += 12) table.set(fourcc(b, o), u64le(b, o + 4));
  return { dataBytes: u64le(b, 8), sampleCount: u64le(b, 16), table };
}

const MAX_HEADER_CHUNK_BYTES = 1024 * 1024;

/** The head of a bext chunk (time reference and loudness), read whatever its size; `size` is what its header declares. */
async function readBext(
  reader: ByteReader,
  size: number,
): Promise<MetadataReading & { timeReferenceSamples: number | null }> {
  const body = await reader.read(Math.min(size, BEXT_READ_BYTES));
  const timeReferenceSamples =
    body.length >= BEXT_TIME_REFERENCE_OFFSET + 8 ? u64le(body, BEXT_TIME_REFERENCE_OFFSET) : null;
  return { ...parseBextLoudness(body, size), timeReferenceSamples };
}

/** An iXML chunk, when it is small enough to be metadata and all there. */
async function readIxml(reader: ByteReader, size: number): Promise<MetadataReading> {
  const cap = Math.min(MAX_IXML_BYTES, reader.capacityBytes);
  const skipped = (message: string): MetadataReading => ({
    declared: null,
    warnings: [{ code: 'unreadable_metadata', message }],
  });
  if (size > cap) return skipped(`iXML chunk of ${size} bytes is larger than the ${cap} bytes read: not read`);
  const body = await reader.read(size);
  if (body.length < size)
    return skipped(`the file ends inside the iXML chunk after ${body.length} of its ${size} bytes: not read`);
  return parseIxmlLoudness(body);
}

/**
 * Reads chunk headers up to the data chunk. With a seekable reader it also looks past the data
 * for a bext chunk, then the caller reopens at dataOffset.
 */
export async function parseRiff(reader: ByteReader, container: Container): Promise<PcmPlan> {
  const head = await reader.readExactly(12, 'the RIFF header');
  const riffId = fourcc(head, 0);
  if (!['RIFF', 'RF64', 'BW64'].includes(riffId) || fourcc(head, 8) !== 'WAVE')
    throw new EarmarkError('unsupported_format', 'not a RIFF/WAVE file');
  const is64 = riffId !== 'RIFF';
  const warnings: DecodeWarning[] = [];
  let ds64: Ds64 | null = null;
  let fmt: WaveFmt | null = null;
  let timeReferenceSamples: number | null = null;
  let chna: ChnaTrack[] | null = null;
  const declaredLoudness: DeclaredLoudness[] = [];
  let bextSeen = false;
  let ixmlSeen = false;
  const keep = (reading: MetadataReading) => {
    warnings.push(...reading.warnings);
    if (reading.declared) declaredLoudness.push(reading.declared);
  };
  let data: { offset: number; bytes: number } | null = null;
  const readChna = async (size: number) => {
    const body = await reader.read(Math.min(size, MAX_CHNA_READ_BYTES));
    chna ??= parseChna(body);
  };

  for (;;) {
    if (data && !reader.seekable) break;
    const header = await reader.read(8);
    if (header.length < 8) {
      if (header.length > 0 && !data)
        throw new EarmarkError(
          'corrupt_file',
          `file ends inside a chunk header at offset ${reader.position - header.length}`,
        );
      break;
    }
    const id = fourcc(header, 0);
    let size = u32le(header, 4);
    if (is64 && size === 0xffffffff) {
      const sized = id === 'data' ? ds64?.dataBytes : ds64?.table.get(id);
      if (sized === undefined) {
        if (data) break;
        throw new EarmarkError('corrupt_file', `${riffId} chunk '${id}' has a 64-bit size but no ds64 entry for it`);
      }
      size = sized;
    }
    const chunkOffset = reader.position;
    // Metadata may sit before or after the audio; the first chunk of each kind counts.
    if (id === 'bext' && !bextSeen) {
      bextSeen = true;
      const bext = await readBext(reader, size);
      timeReferenceSamples = bext.timeReferenceSamples;
      keep(bext);
    } else if (id === 'iXML' && !ixmlSeen) {
      ixmlSeen = true;
      keep(await readIxml(reader, size));
    } else if (data) {
      // Past the audio: only metadata we can use; anything odd ends the scan quietly.
      // A chna after the audio still names the channels (a file is read to its end when it can be).
      if (id === 'chna' && chna === null) await readChna(size);
    } else if (id === 'ds64' && is64) {
      if (size > MAX_HEADER_CHUNK_BYTES)
        throw new EarmarkError('corrupt_file', `ds64 chunk of ${size} bytes is implausible`);
      ds64 = parseDs64(await reader.readExactly(size, 'the ds64 chunk'));
    } else if (id === 'fmt ') {
      if (size > MAX_HEADER_CHUNK_BYTES)
        throw new EarmarkError('corrupt_file', `fmt chunk of ${size} bytes is implausible`);
      fmt = parseFmt(await reader.readExactly(size, 'the fmt chunk'));
    } else if (id === 'chna') {
      await readChna(size);
    } else if (id === 'data') {
      if (!fmt) throw new EarmarkError('corrupt_file', 'data chunk comes before the fmt chunk');
      if (is64 && !ds64) throw new EarmarkError('corrupt_file', `${riffId} file has no ds64 chunk before its data`);
      data = { offset: chunkOffset, bytes: size };
      if (!reader.seekable) break; // a stream is left positioned at the first sample
    }
    const consumed = reader.position - chunkOffset;
    const skipped = await reader.skip(size - consumed);
    if (skipped < size - consumed) break;
    if (data && bextSeen && ixmlSeen && chna !== null) break;
    if (size % 2 === 1) {
      if (!data && (await padMissing(reader))) {
        warnings.push({
          code: 'odd_chunk_padding_missing',
          message: `chunk '${id}' has odd size ${size} but no pad byte follows it`,
        });
      } else if ((await reader.skip(1)) < 1) break;
    }
  }

  if (!fmt) throw new EarmarkError('corrupt_file', 'no fmt chunk found');
  if (!data) throw new EarmarkError('corrupt_file', 'no data chunk found');
  const frames = Math.floor(data.bytes / fmt.blockAlign);
  if (ds64 && ds64.sampleCount !== 0 && ds64.sampleCount > frames) {
    // The declared length is not reached: the audio stops where the data does.
    warnings.push({
      code: 'truncated_data',
      atFrame: frames,
      message: `audio data ends after ${frames} frames, the ds64 sample count declares ${ds64.sampleCount} frames`,
    });
  } else if (ds64 && ds64.sampleCount !== 0 && ds64.sampleCount < frames) {
    warnings.push({
      code: 'frames_mismatch',
      atFrame: ds64.sampleCount,
      message: `ds64 sample count ${ds64.sampleCount} is less than the ${frames} frames of data`,
    });
  }
  const fromChna = chna ? labelsFromChna(chna, fmt.channels) : null;
  if (fromChna) warnings.push(...fromChna.warnings);
  const hasMask = fmt.channelMask !== null && fmt.channelMask !== 0;
  const layoutFrom: AudioFormat['layoutFrom'] = fromChna ? 'chna' : hasMask ? 'channel_mask' : undefined;
  const channelLabels =
    fromChna?.labels ??
    (fmt.channelMask === null
      ? defaultChannelLabels(fmt.channels)
      : labelsFromChannelMask(fmt.channelMask, fmt.channels));
  const unnamed = layoutFrom === 'channel_mask' ? channelLabels.filter((l) => l === 'unknown').length : 0;
  if (unnamed > 0) {
    // WAVE defines mask bits 0-17 only; a channel past the mask's set bits has no speaker either.
    warnings.push({
      code: 'channel_unidentified',
      count: unnamed,
      message: `channel mask 0x${(fmt.channelMask ?? 0).toString(16).toUpperCase()} names no WAVE speaker for ${unnamed} of ${fmt.channels} channels; read as 'unknown' (weight 1.0)`,
    });
  }
  const format: AudioFormat = {
    container,
    encoding: fmt.encoding,
    sampleRate: fmt.sampleRate,
    channels: fmt.channels,
    bitsPerSample: fmt.bitsPerSample,
    frames,
    durationSeconds: frames / fmt.sampleRate,
    // chna names every track by ADM ID; the mask has no bits for 22.2's wides, top sides or bottom.
    channelLabels,
    ...(layoutFrom ? { layoutFrom } : {}),
    channelMask: fmt.channelMask,
    timeReferenceSamples,
    declaredLoudness,
  };
  return {
    format,
    layout: fmt.layout,
    blockAlign: fmt.blockAlign,
    dataOffset: data.offset,
    dataBytes: data.bytes,
    warnings,
  };
}
