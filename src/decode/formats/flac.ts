// Native FLAC (RFC 9639), possibly after an ID3v2 tag. Seeks by frame (flac-seek.ts).
import { hasAscii } from '../bytes.ts';
import { compressedDecoder } from '../compressed.ts';
import { FlacInputSlicer } from '../compressed-flac.ts';
import { readHead, readTail } from '../compressed-probe.ts';
import { flacEndMissing, probeFlac } from '../flac-probe.ts';
import { openFlacAt } from '../flac-seek.ts';

export const flac = compressedDecoder({
  costMsPerMinute: 190,
  detect: (head) => hasAscii(head, 0, 'fLaC'),
  detectAfterId3: (rest) => hasAscii(rest, 0, 'fLaC'),
  async probe(path, fileBytes) {
    const f = probeFlac(await readHead(path));
    return { ...f, endMissing: flacEndMissing(await readTail(path, fileBytes), f.frames, f.maxBlockFrames) };
  },
  slicer: (channels) => new FlacInputSlicer(channels),
  seek: openFlacAt,
});
