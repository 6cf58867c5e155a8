// The top-level chunk list of a RIFF/RF64/BW64 WAVE file, read with positional reads and bounds:
// where each chunk's header and body lie, their sizes resolved through ds64 (EBU Tech 3306).
// Used by the cue/adtl reader (cue.ts) and the markers export, which copies chunks byte for byte.
import type { FileHandle } from 'node:fs/promises';
import { EarmarkError } from '../errors/index.ts';
import { fourcc, u32le, u64le } from './bytes.ts';

export type RiffKind = 'RIFF' | 'RF64' | 'BW64';

export interface RiffChunk {
  id: string;
  /** Offset of the 8-byte chunk header. */
  headerOffset: number;
  bodyOffset: number;
  /** Body bytes present in the file (a chunk cut off by the file's end is clipped to what is there). */
  sizeBytes: number;
  /** The size the header (or ds64) declares. */
  declaredBytes: number;
  /** LIST/list form type ('adtl', 'INFO'), else null. */
  listType: string | null;
}

export interface RiffLayout {
  kind: RiffKind;
  fileBytes: number;
  chunks: RiffChunk[];
}

/** More chunks than any real file has; beyond it the file is treated as damaged (bounded memory). */
const MAX_CHUNKS = 10_000;
const printable = (b: Uint8Array) => b.length >= 4 && b.subarray(0, 4).every((c) => c >= 0x20 && c <= 0x7e);

async function readAt(handle: FileHandle, offset: number, length: number): Promise<Uint8Array> {
  const buffer = new Uint8Array(length);
  const { bytesRead } = await handle.read(buffer, 0, length, offset);
  return buffer.subarray(0, bytesRead);
}

export async function readRiffLayout(handle: FileHandle, fileBytes: number): Promise<RiffLayout> {
  const head = await readAt(handle, 0, 12);
  const kind = head.length === 12 ? fourcc(head, 0) : '';
  if ((kind !== 'RIFF' && kind !== 'RF64' && kind !== 'BW64') || fourcc(head, 8) !== 'WAVE')
    throw new EarmarkError('unsupported_format', 'not a RIFF/WAVE, RF64 or BW64 file');
  const chunks: RiffChunk[] = [];
  let ds64: { dataBytes: number; table: Map<string, number> } | null = null;
  let offset = 12;
  while (offset + 8 <= fileBytes) {
    if (chunks.length >= MAX_CHUNKS)
      throw new EarmarkError('corrupt_file', `more than ${MAX_CHUNKS} chunks: not a plausible WAVE file`);
    const header = await readAt(handle, offset, 12);
    if (!printable(header)) break; // trailing bytes that are no chunk
    const id = fourcc(header, 0);
    let declared = u32le(header, 4);
    if (kind !== 'RIFF' && declared === 0xffffffff) {
      const sized = id === 'data' ? ds64?.dataBytes : ds64?.table.get(id);
      if (sized === undefined)
        throw new EarmarkError('corrupt_file', `${kind} chunk '${id}' has a 64-bit size but no ds64 entry for it`);
      declared = sized;
    }
    const bodyOffset = offset + 8;
    const sizeBytes = Math.min(declared, fileBytes - bodyOffset);
    const listType = (id === 'LIST' || id === 'list') && header.length >= 12 ? fourcc(header, 8) : null;
    chunks.push({ id, headerOffset: offset, bodyOffset, sizeBytes, declaredBytes: declared, listType });
    if (id === 'ds64' && kind !== 'RIFF' && ds64 === null) {
      const body = await readAt(handle, bodyOffset, Math.min(sizeBytes, 28 + 12 * 64));
      if (body.length < 28) throw new EarmarkError('corrupt_file', 'ds64 chunk is shorter than 28 bytes');
      const table = new Map<string, number>();
      for (let i = 0, o = 28; i < u32le(body, 24) && o + 12 <= body.length; i++, o += 12)
        table.set(fourcc(body, o), u64le(body, o + 4));
      ds64 = { dataBytes: u64le(body, 8), table };
    }
    let next = bodyOffset + declared;
    // Word alignment: an odd-sized chunk is followed by a pad byte, which some writers forget.
    if (declared % 2 === 1 && next < fileBytes) {
      const [padded, unpadded] = [await readAt(handle, next + 1, 4), await readAt(handle, next, 4)];
      next += !printable(padded) && printable(unpadded) ? 0 : 1;
    }
    offset = next;
  }
  return { kind, fileBytes, chunks };
}
