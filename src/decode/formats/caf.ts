// Core Audio Format: desc, pakt and data chunks (big-endian).
import { EarmarkError } from '../../errors/index.ts';
import { ascii, f64be, hasAscii, u32be, u64be } from '../bytes.ts';
import { compressedDecoder, WHOLE_CHUNKS } from '../compressed.ts';
import { readHead, type Probe } from '../compressed-probe.ts';

function probeCaf(head: Uint8Array, fileBytes: number): Probe {
  if (ascii(head, 0, 4) !== 'caff') throw new EarmarkError('corrupt_file', 'CAF signature not found');
  let desc: {
    rate: number;
    format: string;
    flags: number;
    bytesPerPacket: number;
    framesPerPacket: number;
    channels: number;
    bits: number;
  } | null = null;
  let dataBytes: number | null = null;
  let validFrames: number | null = null;
  let dataEnd = 0;
  for (let o = 8; o + 12 <= head.length; ) {
    const type = ascii(head, o, 4);
    const size = u64be(head, o + 4);
    const body = o + 12;
    if (type === 'desc' && body + 32 <= head.length) {
      desc = {
        rate: f64be(head, body),
        format: ascii(head, body + 8, 4),
        flags: u32be(head, body + 12),
        bytesPerPacket: u32be(head, body + 16),
        framesPerPacket: u32be(head, body + 20),
        channels: u32be(head, body + 24),
        bits: u32be(head, body + 28),
      };
    } else if (type === 'pakt' && body + 16 <= head.length) validFrames = u64be(head, body + 8);
    if (type === 'data') {
      const open = size === 2 ** 64 - 1 || size > 2 ** 53;
      dataBytes = open ? fileBytes - body - 4 : size - 4;
      dataEnd = open ? fileBytes : body + size;
      break;
    }
    o = body + size;
  }
  if (!desc?.channels || !(desc.rate > 0))
    throw new EarmarkError('corrupt_file', 'CAF desc chunk is missing or invalid');
  const kinds: Record<string, string> = { alaw: 'pcm_alaw', ulaw: 'pcm_mulaw', ima4: 'adpcm_ima_qt' };
  let encoding = kinds[desc.format];
  if (desc.format === 'lpcm') encoding = `pcm_${desc.flags & 1 ? 'f' : 's'}${desc.bits}${desc.flags & 2 ? 'le' : 'be'}`;
  if (!encoding)
    throw new EarmarkError('unsupported_encoding', `CAF audio format ${JSON.stringify(desc.format)} is not supported`);
  const fromData =
    dataBytes !== null && desc.bytesPerPacket
      ? Math.floor(dataBytes / desc.bytesPerPacket) * desc.framesPerPacket
      : null;
  return {
    codec: 'caf',
    encoding,
    sampleRate: desc.rate,
    channels: desc.channels,
    bitsPerSample: desc.format === 'lpcm' ? desc.bits : null,
    frames: validFrames ?? fromData,
    framesSlack: desc.format === 'ima4' ? 64 : 0,
    wholeFile: false,
    endMissing: dataBytes === null ? null : dataEnd > fileBytes,
  };
}

export const caf = compressedDecoder({
  // Not measured (no CAF in bench:decoders): as the other compressed formats.
  costMsPerMinute: 200,
  detect: (head) => hasAscii(head, 0, 'caff'),
  probe: async (path, fileBytes) => probeCaf(await readHead(path), fileBytes),
  slicer: () => WHOLE_CHUNKS,
});
