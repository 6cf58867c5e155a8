// MP4/M4A (ISO/IEC 14496-12): AAC, ALAC, FLAC, Opus or MP3 in a sound track.
import { EarmarkError } from '../../errors/index.ts';
import { hasAscii } from '../bytes.ts';
import { compressedDecoder, fixedSlices, SMALL_SLICE_BYTES } from '../compressed.ts';
import { probeMp4 } from '../compressed-mp4.ts';
import type { Probe } from '../compressed-probe.ts';

async function probeM4a(path: string, fileBytes: number): Promise<Probe> {
  const { tableFrames, layout, moovFirst, cut, ...m } = await probeMp4(path, fileBytes);
  const slack = m.encoding === 'flac' || m.encoding === 'alac' ? 0 : 4096;
  // mdhd is one patchable number; the sample table is what the decoder will actually produce.
  if (m.frames !== null && tableFrames !== null && tableFrames > m.frames + Math.max(slack, m.frames / 100)) {
    throw new EarmarkError(
      'corrupt_file',
      `MP4 sample table holds ${(tableFrames / m.sampleRate).toFixed(1)} s of audio but mdhd declares ${(m.frames / m.sampleRate).toFixed(1)} s`,
      { declaredFrames: m.frames, tableFrames },
    );
  }
  return {
    codec: 'mp4',
    ...m,
    tableFrames,
    bitsPerSample: null,
    framesSlack: slack,
    wholeFile: !moovFirst,
    endMissing: cut,
    ...(moovFirst ? {} : { mp4Layout: layout }),
  };
}

export const m4a = compressedDecoder({
  costMsPerMinute: 250,
  // The ftyp box type right after the first box's size.
  detect: (head) => hasAscii(head, 4, 'ftyp'),
  probe: probeM4a,
  slicer: () => fixedSlices(SMALL_SLICE_BYTES),
});
