// Which byte ranges of a stored PCM file an excerpt reads, planned from the object's head alone, so
// the object store can fetch only those into a sparse temp file of the object's full size.
// The excerpt's reads (engine/excerpt.ts through decode/index.ts and pcm/decoder.ts):
// - detection: the first DETECT_HEAD_BYTES (inside the head fetched);
// - the header parse: every chunk before the samples, then, on a file, the chunks after them
//   (riff.ts looks there for bext, iXML and chna), so the whole tail after the data is fetched;
// - the samples: pcmExcerptBytes (decode/excerpt-span.ts).
// Anything else (compressed formats, a header longer than the head, a large tail) is null: the
// caller copies the whole object, so a decoder never reads a hole as silence.
import { parseAiff } from '../decode/aiff.ts';
import { ByteReader } from '../decode/byte-reader.ts';
import { DETECT_HEAD_BYTES, detectContainer } from '../decode/detect.ts';
import { pcmExcerptBytes } from '../decode/excerpt-span.ts';
import type { PcmHeaderParser } from '../decode/pcm/decoder.ts';
import { parseRiff } from '../decode/riff.ts';
import type { Container } from '../decode/types.ts';

/** Heads tried in turn: most files' samples start in the first few kB, a long bext or JUNK later. */
export const HEAD_BYTES = [64 * 1024, 1024 * 1024] as const;
/** Metadata after the samples read whole; a longer tail is copied with the whole object. */
export const MAX_TAIL_BYTES = 4 * 1024 * 1024;

const PARSERS: Partial<Record<Container, PcmHeaderParser>> = {
  wav: parseRiff,
  rf64: parseRiff,
  bw64: parseRiff,
  aiff: parseAiff,
  aifc: parseAiff,
};

export type ExcerptPlan =
  /** Ranges [from, to) to fetch besides the head, clipped to the object. */
  { kind: 'ranges'; ranges: [number, number][] } | { kind: 'more_head' } | { kind: 'whole' };

/** The ranges an excerpt of [startSeconds, endSeconds) reads, from `head` = the object's first bytes. */
export async function planExcerpt(
  head: Uint8Array,
  sizeBytes: number,
  startSeconds: number,
  endSeconds: number,
): Promise<ExcerptPlan> {
  const whole = head.length >= sizeBytes;
  if (whole || head.length < DETECT_HEAD_BYTES) return { kind: 'whole' };
  const container = detectContainer(head.subarray(0, DETECT_HEAD_BYTES));
  const parse = container ? PARSERS[container] : undefined;
  if (!container || !parse) return { kind: 'whole' };
  // As a stream the parser stops at the first sample, reading exactly what the file parse reads before it.
  let plan: Awaited<ReturnType<PcmHeaderParser>>;
  const reader = ByteReader.fromStream(
    (async function* () {
      yield head;
    })(),
  );
  try {
    plan = await parse(reader, container);
  } catch {
    return { kind: 'more_head' };
  } finally {
    await reader.close();
  }
  if (reader.position > head.length || plan.dataOffset > head.length) return { kind: 'more_head' };
  const dataEnd = plan.dataOffset + plan.dataBytes;
  const tailFrom = Math.min(sizeBytes, dataEnd);
  if (sizeBytes - tailFrom > MAX_TAIL_BYTES) return { kind: 'whole' };
  const span = pcmExcerptBytes(plan, startSeconds, endSeconds);
  const ranges: [number, number][] = [];
  const add = (from: number, to: number) => {
    const a = Math.max(from, head.length);
    const b = Math.min(to, sizeBytes);
    if (b > a) ranges.push([a, b]);
  };
  add(span.from, span.to);
  add(tailFrom, sizeBytes);
  return { kind: 'ranges', ranges: mergeRanges(ranges) };
}

function mergeRanges(ranges: [number, number][]): [number, number][] {
  const sorted = [...ranges].sort((x, y) => x[0] - y[0]);
  const merged: [number, number][] = [];
  for (const [from, to] of sorted) {
    const last = merged.at(-1);
    if (last && from <= last[1]) last[1] = Math.max(last[1], to);
    else merged.push([from, to]);
  }
  return merged;
}
