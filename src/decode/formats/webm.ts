// WebM/Matroska (EBML, RFC 8794) carrying Opus or Vorbis.
import { compressedDecoder, fixedSlices, SMALL_SLICE_BYTES } from '../compressed.ts';
import { readHead } from '../compressed-probe.ts';
import { probeWebm } from '../compressed-webm.ts';

export const webm = compressedDecoder({
  costMsPerMinute: 230,
  // The EBML header element id.
  detect: (head) => head.length >= 4 && head[0] === 0x1a && head[1] === 0x45 && head[2] === 0xdf && head[3] === 0xa3,
  probe: async (path) => ({
    codec: 'webm',
    ...probeWebm(await readHead(path)),
    bitsPerSample: null,
    framesSlack: 4096,
    wholeFile: false,
    endMissing: null,
  }),
  // Sliced for its input too: besides its output, this decoder slows down more than in proportion
  // to the input one call is given (2 minutes of Opus silence, 400 KB, in one call: over a
  // minute; in 1 KiB slices: 1 s).
  slicer: () => fixedSlices(SMALL_SLICE_BYTES),
});
