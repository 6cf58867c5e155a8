// RIFF `cue ` points and their `LIST`/`adtl` texts (`labl`, `note`, `ltxt`), read back from a
// WAVE-family file with bounds: the markers export is checked by this reader. Layout from the
// Microsoft/IBM "Multimedia Programming Interface and Data Specifications 1.0" (1991), section
// "Cue-Points Chunk" and "Associated Data List" (from memory): a cue point is 24 bytes (dwName,
// dwPosition, fccChunk, dwChunkStart, dwBlockStart, dwSampleOffset).
import { open } from 'node:fs/promises';
import { EarmarkError } from '../errors/index.ts';
import { fourcc, u32le } from './bytes.ts';
import { readRiffLayout, type RiffChunk } from './riff-chunks.ts';

export interface CueMarker {
  id: number;
  /** Sample frame of the marker within the data chunk (dwSampleOffset). */
  sampleOffset: number;
  label: string | null;
  note: string | null;
  /** Span length from an `ltxt` sub-chunk, in sample frames; null without one. */
  lengthFrames: number | null;
  /** The ltxt purpose id (e.g. 'rgn '), null without one. */
  purpose: string | null;
}

/** Larger cue or adtl chunks than this are refused: 100 000 markers fit many times over. */
export const MAX_MARKER_CHUNK_BYTES = 16 * 1024 * 1024;

const utf8 = new TextDecoder('utf-8');
/** A zero-terminated string (the terminator and anything after it dropped). */
function zstr(b: Uint8Array): string {
  const end = b.indexOf(0);
  return utf8.decode(end < 0 ? b : b.subarray(0, end));
}

async function body(path: string, chunk: RiffChunk): Promise<Uint8Array> {
  if (chunk.sizeBytes > MAX_MARKER_CHUNK_BYTES)
    throw new EarmarkError('corrupt_file', `'${chunk.id}' chunk of ${chunk.sizeBytes} bytes is implausible`);
  const handle = await open(path, 'r');
  try {
    const b = new Uint8Array(chunk.sizeBytes);
    const { bytesRead } = await handle.read(b, 0, b.length, chunk.bodyOffset);
    return b.subarray(0, bytesRead);
  } finally {
    await handle.close();
  }
}

/** Markers of the file in cue-chunk order, with their texts; [] when it has no cue chunk. */
export async function readCueMarkers(path: string): Promise<CueMarker[]> {
  const handle = await open(path, 'r').catch(() => {
    throw new EarmarkError('file_not_found', 'the file does not exist or cannot be read');
  });
  let chunks: RiffChunk[];
  try {
    chunks = (await readRiffLayout(handle, (await handle.stat()).size)).chunks;
  } finally {
    await handle.close();
  }
  const cue = chunks.find((c) => c.id === 'cue ');
  if (!cue) return [];
  const b = await body(path, cue);
  if (b.length < 4) throw new EarmarkError('corrupt_file', 'cue chunk is shorter than 4 bytes');
  const count = u32le(b, 0);
  if (4 + count * 24 > b.length)
    throw new EarmarkError('corrupt_file', `cue chunk declares ${count} points but holds ${b.length} bytes`);
  const markers: CueMarker[] = [];
  const byId = new Map<number, CueMarker>();
  for (let i = 0, o = 4; i < count; i++, o += 24) {
    const marker: CueMarker = {
      id: u32le(b, o),
      sampleOffset: u32le(b, o + 20),
      label: null,
      note: null,
      lengthFrames: null,
      purpose: null,
    };
    markers.push(marker);
    byId.set(marker.id, marker);
  }
  for (const list of chunks.filter((c) => c.listType === 'adtl')) {
    const a = await body(path, list);
    for (let o = 4; o + 12 <= a.length; ) {
      const id = fourcc(a, o);
      const size = u32le(a, o + 4);
      if (size < 4 || o + 8 + size > a.length) throw new EarmarkError('corrupt_file', `adtl '${id}' overruns its list`);
      const sub = a.subarray(o + 8, o + 8 + size);
      const marker = byId.get(u32le(sub, 0));
      if (marker && id === 'labl') marker.label = zstr(sub.subarray(4));
      if (marker && id === 'note') marker.note = zstr(sub.subarray(4));
      if (marker && id === 'ltxt' && size >= 20) {
        marker.lengthFrames = u32le(sub, 4);
        marker.purpose = fourcc(sub, 8);
      }
      o += 8 + size + (size % 2);
    }
  }
  return markers;
}
