// Ogg (RFC 3533) carrying Vorbis, Opus or FLAC.
import { EarmarkError } from '../../errors/index.ts';
import { readRange } from '../byte-reader.ts';
import { ascii, hasAscii, u16le, u32le, u64le } from '../bytes.ts';
import { compressedDecoder, fixedSlices, SMALL_SLICE_BYTES } from '../compressed.ts';
import { readHead, type Probe } from '../compressed-probe.ts';
import { flacStreamInfo } from '../flac-probe.ts';

async function probeOgg(path: string, head: Uint8Array, fileBytes: number): Promise<Probe> {
  if (ascii(head, 0, 4) !== 'OggS' || head.length < 28)
    throw new EarmarkError('corrupt_file', 'Ogg page header not found');
  const serial = u32le(head, 14);
  const p = 27 + head[26];
  let info: Omit<Probe, 'frames' | 'endMissing'> & { preSkip: number; total: number | null };
  if (ascii(head, p, 7) === '\x01vorbis') {
    info = {
      codec: 'vorbis',
      encoding: 'vorbis',
      channels: head[p + 11],
      sampleRate: u32le(head, p + 12),
      bitsPerSample: null,
      framesSlack: 2048,
      wholeFile: false,
      preSkip: 0,
      total: null,
    };
  } else if (ascii(head, p, 8) === 'OpusHead') {
    // Opus always decodes at 48 kHz; the header's rate is only the source's.
    info = {
      codec: 'opus',
      encoding: 'opus',
      channels: head[p + 9],
      sampleRate: 48000,
      bitsPerSample: null,
      framesSlack: 1920,
      wholeFile: false,
      preSkip: u16le(head, p + 10),
      total: null,
    };
  } else if (ascii(head, p, 5) === '\x7fFLAC' && ascii(head, p + 9, 4) === 'fLaC') {
    const s = flacStreamInfo(head, p + 17);
    info = {
      codec: 'oggflac',
      encoding: 'flac',
      channels: s.channels,
      sampleRate: s.sampleRate,
      bitsPerSample: s.bits,
      framesSlack: 0,
      wholeFile: false,
      preSkip: 0,
      total: s.total || null,
    };
  } else throw new EarmarkError('unsupported_encoding', 'Ogg stream is not Vorbis, Opus or FLAC');
  if (!info.channels || !info.sampleRate)
    throw new EarmarkError('corrupt_file', 'Ogg identification header declares no channels or rate');
  const { preSkip, total, ...rest } = info;
  const last = await lastPage(path, fileBytes, serial);
  // Without the end-of-stream page the last granule is where the cut happened, not the length.
  const granule = total ?? (last?.eos ? last.granule : null);
  return { ...rest, frames: granule === null ? null : Math.max(0, granule - preSkip), endMissing: !last?.eos };
}

/** Granule position of the last page of the stream: the stream's end in output frames (Vorbis/FLAC) or 48 kHz samples + pre-skip (Opus). */
async function lastPage(
  path: string,
  fileBytes: number,
  serial: number,
): Promise<{ granule: number; eos: boolean } | null> {
  const span = Math.min(fileBytes, 128 * 1024);
  const tail = await readRange(path, fileBytes - span, span);
  for (let o = tail.length - 27; o >= 0; o--) {
    if (tail[o] !== 0x4f || ascii(tail, o, 4) !== 'OggS' || u32le(tail, o + 14) !== serial) continue;
    if (u32le(tail, o + 6) === 0xffffffff && u32le(tail, o + 10) === 0xffffffff) continue; // no packet ends on this page
    const bodyBytes = tail.subarray(o + 27, o + 27 + tail[o + 26]).reduce((sum, lace) => sum + lace, 0);
    const complete = o + 27 + tail[o + 26] + bodyBytes <= tail.length;
    return { granule: u64le(tail, o + 6), eos: complete && (tail[o + 5] & 4) !== 0 };
  }
  return null;
}

export const ogg = compressedDecoder({
  costMsPerMinute: 230,
  // Capture pattern and stream structure version 0.
  detect: (head) => hasAscii(head, 0, 'OggS') && head[4] === 0,
  probe: async (path, fileBytes) => probeOgg(path, await readHead(path), fileBytes),
  slicer: () => fixedSlices(SMALL_SLICE_BYTES),
});
