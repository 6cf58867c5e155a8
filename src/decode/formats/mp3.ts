// MPEG audio (layer III, and layers I/II after an ID3v2 tag). Seeks by frame when a LAME/Info
// header gives the decoder's trim (mp3-seek.ts).
import { id3v2Length } from '../bytes.ts';
import { compressedDecoder, fixedSlices, MP3_SLICE_BYTES } from '../compressed.ts';
import { parseMpegHeader, probeMp3 } from '../compressed-mp3.ts';
import { frameChainCut, framedStream, readHead, readTail, type Probe } from '../compressed-probe.ts';
import { openMp3At } from '../mp3-seek.ts';

/** Length of the layer III frame at `o` (reserved emphasis rejected too), 0 when its header is invalid. */
function layer3FrameBytes(b: Uint8Array, o: number): number {
  const h = parseMpegHeader(b, o);
  return h !== null && h.layer === 3 && (b[o + 3] & 3) !== 2 ? h.frameBytes : 0;
}

async function probe(path: string, fileBytes: number): Promise<Probe> {
  const head = await readHead(path);
  // A large ID3v2 tag (cover art) can push the first frame beyond the head we read.
  const skip = id3v2Length(head);
  const m = probeMp3(skip + 65536 > head.length ? await readHead(path, skip) : head.subarray(skip), 0);
  const h = m.header;
  // Without a Xing/Info/VBRI byte count, the last frame's own length tells a cut.
  const endMissing =
    m.streamBytes !== null
      ? fileBytes - skip < m.streamBytes - h.frameBytes
      : frameChainCut(await readTail(path, fileBytes), (b, o) => parseMpegHeader(b, o)?.frameBytes ?? 0);
  return {
    codec: 'mp3',
    encoding: h.layer === 3 ? 'mp3' : `mp${h.layer}`,
    sampleRate: h.sampleRate,
    channels: h.channels,
    bitsPerSample: null,
    frames: m.frames,
    framesSlack: 2 * h.samplesPerFrame,
    wholeFile: false,
    endMissing,
  };
}

export const mp3 = compressedDecoder({
  costMsPerMinute: 240,
  // Bare: a valid layer III frame, followed by another where the head reaches.
  detect: (head) => framedStream(head, 0, layer3FrameBytes),
  // After a tag any frame sync is accepted.
  detectAfterId3: (rest) => rest.length >= 2 && rest[0] === 0xff && (rest[1] & 0xe0) === 0xe0,
  probe,
  slicer: () => fixedSlices(MP3_SLICE_BYTES),
  seek: openMp3At,
});
