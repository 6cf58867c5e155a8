// WebM/Matroska probe: the first audio TrackEntry and Segment Info duration, read from the file head.
import { EarmarkError } from '../errors/index.ts';
import { ascii, f32be, f64be, uintbe } from './bytes.ts';

export interface WebmProbe {
  encoding: string;
  sampleRate: number;
  channels: number;
  frames: number | null;
}

const ID = {
  segment: 0x18538067,
  info: 0x1549a966,
  timecodeScale: 0x2ad7b1,
  duration: 0x4489,
  tracks: 0x1654ae6b,
  trackEntry: 0xae,
  trackType: 0x83,
  codecId: 0x86,
  audio: 0xe1,
  samplingFrequency: 0xb5,
  channels: 0x9f,
  cluster: 0x1f43b675,
} as const;
const MASTERS = new Set<number>([ID.segment, ID.info, ID.tracks, ID.trackEntry, ID.audio]);

function vint(
  b: Uint8Array,
  o: number,
  keepMarker: boolean,
): { value: number; length: number; unknown: boolean } | null {
  const first = b[o];
  if (first === undefined || first === 0) return null;
  let length = 1;
  while (!(first & (0x80 >> (length - 1)))) length++;
  if (o + length > b.length) return null;
  let value = keepMarker ? first : first & (0xff >> length);
  let allOnes = value === 0xff >> length;
  for (let i = 1; i < length; i++) {
    value = value * 256 + b[o + i];
    allOnes &&= b[o + i] === 0xff;
  }
  return { value, length, unknown: !keepMarker && allOnes };
}

const float = (b: Uint8Array, o: number, n: number): number => (n === 4 ? f32be(b, o) : n === 8 ? f64be(b, o) : NaN);

interface Track {
  type?: number;
  codec?: string;
  rate?: number;
  channels?: number;
}

export function probeWebm(head: Uint8Array): WebmProbe {
  let scale = 1_000_000;
  let track: Track = {};
  // Held in an object: assignments inside the closure defeat TypeScript's narrowing of plain lets.
  const found: { audio: Track | null; duration: number | null } = { audio: null, duration: null };
  const walk = (from: number, to: number): boolean => {
    for (let o = from; o < to; ) {
      const id = vint(head, o, true);
      const size = id && vint(head, o + id.length, false);
      if (!id || !size) return false;
      const body = o + id.length + size.length;
      const end = size.unknown ? to : Math.min(to, body + size.value);
      if (id.value === ID.cluster) return true;
      if (id.value === ID.trackEntry) track = {};
      if (MASTERS.has(id.value)) {
        if (walk(body, end)) return true;
      } else if (end <= head.length) {
        if (id.value === ID.timecodeScale) scale = uintbe(head, body, end - body);
        else if (id.value === ID.duration) found.duration = float(head, body, end - body);
        else if (id.value === ID.trackType) track.type = uintbe(head, body, end - body);
        else if (id.value === ID.codecId) track.codec = ascii(head, body, end - body).replace(/\0+$/, '');
        else if (id.value === ID.samplingFrequency) track.rate = float(head, body, end - body);
        else if (id.value === ID.channels) track.channels = uintbe(head, body, end - body);
      }
      if (id.value === ID.trackEntry && track.type === 2 && !found.audio) found.audio = track;
      o = end;
    }
    return false;
  };
  walk(0, head.length);
  const a = found.audio;
  if (!a) throw new EarmarkError('corrupt_file', 'WebM file has no audio track in its first MiB');
  const encoding = a.codec === 'A_OPUS' ? 'opus' : a.codec === 'A_VORBIS' ? 'vorbis' : null;
  if (!encoding)
    throw new EarmarkError('unsupported_encoding', `WebM audio codec ${JSON.stringify(a.codec)} is not supported`);
  const sampleRate = encoding === 'opus' ? 48000 : Math.round(a.rate ?? 8000);
  const channels = a.channels ?? 1;
  const d = found.duration;
  const frames = d && Number.isFinite(d) ? Math.round(((d * scale) / 1e9) * sampleRate) : null;
  return { encoding, sampleRate, channels, frames };
}
