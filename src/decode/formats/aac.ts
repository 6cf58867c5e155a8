// ADTS (raw AAC frames, ISO/IEC 13818-7 adts_frame), possibly after an ID3v2 tag.
import { EarmarkError } from '../../errors/index.ts';
import { id3v2Length } from '../bytes.ts';
import { compressedDecoder, fixedSlices, SMALL_SLICE_BYTES } from '../compressed.ts';
import { frameChainCut, framedStream, readHead, readTail, type Probe } from '../compressed-probe.ts';

const ADTS_RATES = [96000, 88200, 64000, 48000, 44100, 32000, 24000, 22050, 16000, 12000, 11025, 8000, 7350];

/** ADTS frame length (ISO/IEC 14496-3 1.A.2: 13 bits, header included) at `o`, 0 when no header is there. */
export function adtsFrameBytes(b: Uint8Array, o: number): number {
  if (o + 7 > b.length || b[o] !== 0xff || (b[o + 1] & 0xf6) !== 0xf0 || ((b[o + 2] >> 2) & 15) >= ADTS_RATES.length)
    return 0;
  const bytes = ((b[o + 3] & 3) << 11) | (b[o + 4] << 3) | (b[o + 5] >> 5);
  return bytes >= 7 ? bytes : 0;
}

function probeAdts(head: Uint8Array): Probe {
  const o = id3v2Length(head);
  if (head[o] !== 0xff || (head[o + 1] & 0xf6) !== 0xf0)
    throw new EarmarkError('corrupt_file', 'ADTS sync word not found');
  const sampleRate = ADTS_RATES[(head[o + 2] >> 2) & 15];
  const channels = ((head[o + 2] & 1) << 2) | (head[o + 3] >> 6);
  if (!sampleRate) throw new EarmarkError('corrupt_file', 'ADTS header has an invalid sample rate');
  if (!channels)
    throw new EarmarkError('unsupported_encoding', 'ADTS with in-band channel configuration (0) is not supported');
  return {
    codec: 'aac',
    encoding: 'aac',
    sampleRate,
    channels,
    bitsPerSample: null,
    frames: null,
    framesSlack: 4096,
    wholeFile: false,
    endMissing: null,
  };
}

export const aac = compressedDecoder({
  costMsPerMinute: 230,
  detect: (head) => framedStream(head, 0, adtsFrameBytes),
  detectAfterId3: (rest) => adtsFrameBytes(rest, 0) > 0,
  probe: async (path, fileBytes) => ({
    ...probeAdts(await readHead(path)),
    endMissing: frameChainCut(await readTail(path, fileBytes), adtsFrameBytes),
  }),
  slicer: () => fixedSlices(SMALL_SLICE_BYTES),
});
