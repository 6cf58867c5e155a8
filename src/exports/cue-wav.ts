// A copy of a WAVE-family file (RIFF, RF64, BW64) with one RIFF `cue ` point per flag and a
// `LIST`/`adtl` chunk naming them (`labl`: number, severity, title, channel; `note`: the flag's
// message; `ltxt` with purpose 'rgn ': the span length), so an editor shows the flags in any tool
// that reads WAVE cue points. Streamed: every other chunk, the audio included, is copied byte for
// byte in 1 MiB reads; existing `cue ` and `LIST`/`adtl` chunks are replaced; the new ones go just
// before the data chunk (readers that stop at the audio still see them). Sizes: RIFF's size field,
// or for RF64/BW64 the ds64 riffSize (EBU Tech 3306), cover the new file; every chunk is padded
// to an even length. Other containers are refused with `markers_need_wave` (no decode to WAV: an
// editor wants the delivered file's own audio, bit for bit).
import { open } from 'node:fs/promises';
import { u16le } from '../decode/bytes.ts';
import { readRiffLayout, type RiffChunk, type RiffKind } from '../decode/riff-chunks.ts';
import { EarmarkError } from '../errors/index.ts';
import type { Flag } from '../profiles/index.ts';

export interface MarkedWav {
  kind: RiffKind;
  sizeBytes: number;
  /** Cue points written (flags past the audio's end or past 2^32 frames have none). */
  markers: number;
  /** The new file, in pieces; reads the source as it goes. */
  chunks(): AsyncGenerator<Uint8Array>;
}

const COPY_BYTES = 1024 * 1024;
const LABEL_BYTES = 255;
const NOTE_BYTES = 1023;
const MAX_U32 = 0xffffffff;
const utf8 = new TextEncoder();

/** UTF-8 with NULs removed, cut at a character boundary to at most `maxBytes`, zero-terminated. */
function zstr(text: string, maxBytes: number): Uint8Array {
  let bytes = utf8.encode(text.replaceAll('\u0000', ''));
  if (bytes.length > maxBytes) {
    let end = maxBytes;
    while (end > 0 && (bytes[end] & 0xc0) === 0x80) end--;
    bytes = bytes.subarray(0, end);
  }
  const out = new Uint8Array(bytes.length + 1);
  out.set(bytes);
  return out;
}

class Builder {
  readonly parts: Uint8Array[] = [];
  bytes = 0;
  u32(value: number) {
    const b = new Uint8Array(4);
    new DataView(b.buffer).setUint32(0, value, true);
    return this.push(b);
  }
  u16(value: number) {
    const b = new Uint8Array(2);
    new DataView(b.buffer).setUint16(0, value, true);
    return this.push(b);
  }
  id(text: string) {
    return this.push(utf8.encode(text));
  }
  push(b: Uint8Array) {
    this.parts.push(b);
    this.bytes += b.length;
    return this;
  }
  /** A sub-chunk or chunk: id, size, body, pad byte when the body is odd. */
  chunk(id: string, body: Builder) {
    this.id(id).u32(body.bytes);
    for (const p of body.parts) this.push(p);
    if (body.bytes % 2 === 1) this.push(new Uint8Array(1));
    return this;
  }
  concat(): Uint8Array {
    const out = new Uint8Array(this.bytes);
    let o = 0;
    for (const p of this.parts) {
      out.set(p, o);
      o += p.length;
    }
    return out;
  }
}

interface Marker {
  id: number;
  frame: number;
  lengthFrames: number;
  label: string;
  note: string;
}

function markersOf(flags: readonly Flag[], frames: number): Marker[] {
  return flags
    .filter((f) => f.startSample >= 0 && f.startSample <= frames && f.startSample <= MAX_U32)
    .map((f) => ({
      id: f.number,
      frame: f.startSample,
      lengthFrames: Math.min(Math.max(0, Math.min(f.endSample, frames) - f.startSample), MAX_U32),
      label: `#${f.number} ${f.severity}: ${f.title} (ch ${f.channelName})`,
      note: f.message,
    }));
}

/** The `cue ` chunk and the `LIST`/`adtl` chunk, whole (labl first: ffmpeg's reader stops at the first other sub-chunk). */
function markerChunks(markers: readonly Marker[]): Uint8Array {
  const cue = new Builder().u32(markers.length);
  for (const m of markers) cue.u32(m.id).u32(m.frame).id('data').u32(0).u32(0).u32(m.frame);
  const adtl = new Builder().id('adtl');
  for (const m of markers) adtl.chunk('labl', new Builder().u32(m.id).push(zstr(m.label, LABEL_BYTES)));
  for (const m of markers) adtl.chunk('note', new Builder().u32(m.id).push(zstr(m.note, NOTE_BYTES)));
  // dwName, dwSampleLength, dwPurposeID, wCountry, wLanguage, wDialect, wCodePage, no text.
  for (const m of markers.filter((x) => x.lengthFrames > 0))
    adtl.chunk('ltxt', new Builder().u32(m.id).u32(m.lengthFrames).id('rgn ').u16(0).u16(0).u16(0).u16(0));
  return new Builder().chunk('cue ', cue).chunk('LIST', adtl).concat();
}

const padded = (bytes: number) => bytes + (bytes % 2);

async function readBody(path: string, chunk: RiffChunk, limit: number): Promise<Uint8Array> {
  const handle = await open(path, 'r');
  try {
    const b = new Uint8Array(Math.min(chunk.sizeBytes, limit));
    await handle.read(b, 0, b.length, chunk.bodyOffset);
    return b;
  } finally {
    await handle.close();
  }
}

/** Plans the marked copy of the WAVE-family file at `path` with a marker at each flag. */
export async function planMarkedWav(path: string, flags: readonly Flag[]): Promise<MarkedWav> {
  const handle = await open(path, 'r').catch(() => {
    throw new EarmarkError('file_not_found', 'the file does not exist or cannot be read');
  });
  let layout: Awaited<ReturnType<typeof readRiffLayout>>;
  try {
    layout = await readRiffLayout(handle, (await handle.stat()).size);
  } catch (error) {
    if (error instanceof EarmarkError && error.code === 'unsupported_format')
      throw new EarmarkError('markers_need_wave', 'markers can be written only into a WAVE, RF64 or BW64 file');
    throw error;
  } finally {
    await handle.close();
  }
  const { kind, chunks } = layout;
  const fmt = chunks.find((c) => c.id === 'fmt ');
  const data = chunks.find((c) => c.id === 'data');
  if (!fmt || !data) throw new EarmarkError('corrupt_file', `the file has no ${fmt ? 'data' : 'fmt'} chunk`);
  const audio: RiffChunk = data;
  const blockAlign = u16le(await readBody(path, fmt, 16), 12);
  if (blockAlign === 0) throw new EarmarkError('corrupt_file', 'the fmt chunk declares a block align of 0');
  const markers = markersOf(flags, Math.floor(data.sizeBytes / blockAlign));
  const inserted = markerChunks(markers);
  const kept = chunks.filter((c) => c.id !== 'cue ' && c.listType !== 'adtl');
  const ds64 = kind === 'RIFF' ? undefined : kept.find((c) => c.id === 'ds64');
  if (kind !== 'RIFF' && !ds64) throw new EarmarkError('corrupt_file', `${kind} file has no ds64 chunk`);
  // Chunks whose header size is 0xFFFFFFFF take theirs from ds64 (data, or the ds64 table).
  const wide = new Set<RiffChunk>();
  for (const c of kept) {
    if (kind === 'RIFF' || c === ds64) continue;
    const header = await readBody(path, { ...c, bodyOffset: c.headerOffset, sizeBytes: 8 }, 8);
    if (header.length === 8 && header.subarray(4, 8).every((b) => b === 0xff)) wide.add(c);
  }
  // A chunk cut off by the file's end keeps what is there, with a size that says so.
  for (const c of wide)
    if (c !== data && c.sizeBytes !== c.declaredBytes)
      throw new EarmarkError('corrupt_file', `chunk '${c.id}' with a 64-bit size is cut off by the end of the file`);
  if (ds64 && ds64.sizeBytes > 1024 * 1024)
    throw new EarmarkError('corrupt_file', `ds64 chunk of ${ds64.sizeBytes} bytes is implausible`);
  const riffBytes = 4 + inserted.length + kept.reduce((sum, c) => sum + 8 + padded(c.sizeBytes), 0);
  if (kind === 'RIFF' && riffBytes > MAX_U32)
    throw new EarmarkError(
      'markers_need_wave',
      'the markers would take the file past the 4 GiB RIFF limit; deliver it as RF64 or BW64',
    );

  async function* chunkStream(): AsyncGenerator<Uint8Array> {
    const source = await open(path, 'r');
    try {
      yield new Builder()
        .id(kind)
        .u32(kind === 'RIFF' ? riffBytes : MAX_U32)
        .id('WAVE')
        .concat();
      for (const c of kept) {
        if (c === audio) yield inserted;
        if (c === ds64) {
          // ds64: riffSize and dataSize (64-bit) rewritten, the rest (sample count, table) kept.
          const body = await readBody(path, c, c.sizeBytes);
          const view = new DataView(body.buffer);
          view.setBigUint64(0, BigInt(riffBytes), true);
          if (wide.has(audio) && body.length >= 16) view.setBigUint64(8, BigInt(audio.sizeBytes), true);
          yield new Builder().chunk('ds64', new Builder().push(body)).concat();
          continue;
        }
        yield new Builder()
          .id(c.id)
          .u32(wide.has(c) ? MAX_U32 : c.sizeBytes)
          .concat();
        for (let done = 0; done < c.sizeBytes; ) {
          const piece = new Uint8Array(Math.min(COPY_BYTES, c.sizeBytes - done));
          const { bytesRead } = await source.read(piece, 0, piece.length, c.bodyOffset + done);
          if (bytesRead === 0) throw new EarmarkError('corrupt_file', 'the file changed while it was copied');
          done += bytesRead;
          yield piece.subarray(0, bytesRead);
        }
        if (c.sizeBytes % 2 === 1) yield new Uint8Array(1);
      }
    } finally {
      await source.close();
    }
  }
  return { kind, sizeBytes: 8 + riffBytes, markers: markers.length, chunks: chunkStream };
}
