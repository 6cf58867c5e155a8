// AIFF and AIFF-C chunk parsing (big-endian chunks; COMM + SSND). Sample streaming is in pcm/.
import { defaultChannelLabels } from '../analysis/audio.ts';
import { EarmarkError } from '../errors/index.ts';
import type { ByteReader } from './byte-reader.ts';
import { fourcc, u16be, u32be } from './bytes.ts';
import { checkStreamNumbers } from './limits.ts';
import type { SampleLayout } from './pcm/convert.ts';
import type { PcmPlan } from './pcm/stream.ts';
import type { AudioFormat, Container, DecodeWarning } from './types.ts';

/**
 * 80-bit IEEE 754 extended (1 sign, 15 exponent bits biased by 16383, 64-bit mantissa with an
 * explicit integer bit), as the AIFF COMM sampleRate. Returns NaN/Infinity for those encodings.
 */
export function readExtended80(b: Uint8Array, o: number): number {
  const sign = b[o] & 0x80 ? -1 : 1;
  const exponent = u16be(b, o) & 0x7fff;
  const hi = u32be(b, o + 2);
  const lo = u32be(b, o + 6);
  if (exponent === 0x7fff) return (hi & 0x7fffffff) === 0 && lo === 0 ? sign * Infinity : NaN;
  if (exponent === 0 && hi === 0 && lo === 0) return 0;
  // Scale in two steps so denormal-range exponents do not underflow the intermediate.
  const mantissa = hi * 2 ** 32 + lo;
  const shift = exponent - 16383 - 63;
  return sign * mantissa * 2 ** Math.trunc(shift / 2) * 2 ** (shift - Math.trunc(shift / 2));
}

interface Comm {
  channels: number;
  frames: number;
  sampleSizeBits: number;
  sampleRate: number;
  layout: SampleLayout;
  encoding: string;
}

function parseComm(b: Uint8Array, aifc: boolean): Comm {
  if (b.length < 18) throw new EarmarkError('corrupt_file', `COMM chunk is ${b.length} bytes, shorter than 18`);
  const channels = u16be(b, 0);
  const frames = u32be(b, 2);
  const sampleSizeBits = u16be(b, 6);
  const sampleRate = readExtended80(b, 8);
  checkStreamNumbers('COMM chunk', channels, sampleRate);
  let compression = 'NONE';
  if (aifc) {
    if (b.length < 22) throw new EarmarkError('corrupt_file', 'AIFF-C COMM chunk has no compression type');
    compression = fourcc(b, 18);
  }
  const intLayout = (bigEndian: boolean): Comm => {
    if (sampleSizeBits < 1 || sampleSizeBits > 32)
      throw new EarmarkError('corrupt_file', `COMM declares ${sampleSizeBits}-bit samples`);
    const bytesPerSample = Math.ceil(sampleSizeBits / 8) as 1 | 2 | 3 | 4;
    const encoding = bytesPerSample === 1 ? 'pcm_s8' : `pcm_s${bytesPerSample * 8}${bigEndian ? 'be' : 'le'}`;
    return {
      channels,
      frames,
      sampleSizeBits,
      sampleRate,
      layout: { kind: 'int', bytesPerSample, bigEndian },
      encoding,
    };
  };
  const floatLayout = (bytesPerSample: 4 | 8): Comm => ({
    channels,
    frames,
    sampleSizeBits: bytesPerSample * 8,
    sampleRate,
    layout: { kind: 'float', bytesPerSample, bigEndian: true },
    encoding: `pcm_f${bytesPerSample * 8}be`,
  });
  switch (compression) {
    case 'NONE':
    case 'twos':
      return intLayout(true);
    case 'sowt':
      return intLayout(false);
    case 'fl32':
    case 'FL32':
      return floatLayout(4);
    case 'fl64':
    case 'FL64':
      return floatLayout(8);
    default:
      throw new EarmarkError('unsupported_encoding', `AIFF-C compression '${compression}' is not supported`);
  }
}

const MAX_COMM_BYTES = 64 * 1024;

/**
 * Reads chunks until both COMM and SSND are known. SSND before COMM is fine for seekable
 * readers (the caller reopens at dataOffset); a stream cannot go back for it.
 */
export async function parseAiff(reader: ByteReader, container: Container): Promise<PcmPlan> {
  const head = await reader.readExactly(12, 'the FORM header');
  const form = fourcc(head, 8);
  if (fourcc(head, 0) !== 'FORM' || (form !== 'AIFF' && form !== 'AIFC'))
    throw new EarmarkError('unsupported_format', 'not an AIFF or AIFF-C file');
  const aifc = form === 'AIFC';
  const warnings: DecodeWarning[] = [];
  let comm: Comm | null = null;
  let ssnd: { dataOffset: number; availableBytes: number } | null = null;

  while (!comm || !ssnd) {
    const header = await reader.read(8);
    if (header.length < 8) {
      if (header.length > 0)
        throw new EarmarkError(
          'corrupt_file',
          `file ends inside a chunk header at offset ${reader.position - header.length}`,
        );
      break;
    }
    const id = fourcc(header, 0);
    const size = u32be(header, 4);
    const chunkOffset = reader.position;
    if (id === 'COMM') {
      if (size > MAX_COMM_BYTES) throw new EarmarkError('corrupt_file', `COMM chunk of ${size} bytes is implausible`);
      comm = parseComm(await reader.readExactly(size, 'the COMM chunk'), aifc);
    } else if (id === 'SSND') {
      if (size < 8)
        throw new EarmarkError('corrupt_file', `SSND chunk of ${size} bytes has no room for its offset fields`);
      const fields = await reader.readExactly(8, 'the SSND chunk');
      const offsetBytes = u32be(fields, 0);
      if (offsetBytes > size - 8)
        throw new EarmarkError('corrupt_file', `SSND offset ${offsetBytes} is past the end of the chunk`);
      ssnd = { dataOffset: chunkOffset + 8 + offsetBytes, availableBytes: size - 8 - offsetBytes };
      if (!comm && !reader.seekable)
        throw new EarmarkError('corrupt_file', 'SSND comes before COMM, which a non-seekable stream cannot read');
      if (comm && !reader.seekable) {
        if ((await reader.skip(offsetBytes)) < offsetBytes)
          throw new EarmarkError('corrupt_file', 'file ends inside the SSND offset padding');
        break; // the stream stays at the first sample
      }
      if (comm) break;
    }
    const rest = size + (size % 2) - (reader.position - chunkOffset);
    if ((await reader.skip(rest)) < rest) break;
  }

  if (!comm) throw new EarmarkError('corrupt_file', 'no COMM chunk found');
  if (!ssnd) {
    if (comm.frames === 0)
      ssnd = { dataOffset: reader.position, availableBytes: 0 }; // AIFF allows omitting SSND when empty
    else throw new EarmarkError('corrupt_file', 'no SSND chunk found');
  }
  const blockAlign = comm.channels * comm.layout.bytesPerSample;
  let frames = comm.frames;
  const chunkFrames = Math.floor(ssnd.availableBytes / blockAlign);
  if (chunkFrames < frames) {
    // The declared length is not reached: the audio stops where the SSND chunk does.
    warnings.push({
      code: 'truncated_data',
      message: `audio data ends after ${chunkFrames} frames, COMM declares ${frames} frames`,
      atFrame: chunkFrames,
    });
    frames = chunkFrames;
  }
  const format: AudioFormat = {
    container,
    encoding: comm.encoding,
    sampleRate: comm.sampleRate,
    channels: comm.channels,
    bitsPerSample: comm.sampleSizeBits,
    frames,
    durationSeconds: frames / comm.sampleRate,
    channelLabels: defaultChannelLabels(comm.channels),
    channelMask: null,
    timeReferenceSamples: null,
  };
  return {
    format,
    layout: comm.layout,
    blockAlign,
    dataOffset: ssnd.dataOffset,
    dataBytes: frames * blockAlign,
    warnings,
  };
}
