// Damaged deliveries with known defects at known samples, for the CLI and the API journeys.
// Every file is 48 kHz stereo 24-bit: a 997 Hz sine at -23 dBFS peak in both channels, R a quarter
// period behind L (so not dual mono), which reads -23.0 LUFS (ITU-R BS.1770-5: power adds across
// channels whatever the phase), so loudness alone would pass EBU R 128 and whatever else a verdict
// says comes from the defect.

import { openSync, closeSync, ftruncateSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { writeWavFile } from '../../src/encode/wav.ts';

export const RATE = 48000;
const AMPLITUDE = 10 ** (-23 / 20);
const HZ = 997;
const FADE = 480;

export type DefectName = 'clean' | 'truncated' | 'dropout' | 'gap' | 'clip' | 'phase' | 'inverted';

export interface DefectFile {
  path: string;
  /** Where the defect is, in samples from the start (end exclusive); channel null = all. */
  atSample: number;
  endSample: number;
  channel: number | null;
}

/** `edit` gets the channel, the frame, this channel's sample and L's sample. */
interface Spec {
  seconds: number;
  edit: (c: number, n: number, x: number, left: number) => number;
  at: [number, number];
  channel: number | null;
}

const s = (seconds: number) => Math.round(seconds * RATE);

const SPECS: Record<Exclude<DefectName, 'truncated'>, Spec> = {
  clean: { seconds: 20, edit: (_c, _n, x) => x, at: [0, 0], channel: null },
  // 0.5 s of digital zero in R only, cut mid-waveform: a dropout.
  dropout: {
    seconds: 20,
    edit: (c, n, x) => (c === 1 && n >= s(8.0003) && n < s(8.5003) ? 0 : x),
    at: [s(8.0003), s(8.5003)],
    channel: 1,
  },
  // 11 s of digital silence in both channels inside the programme: dead air.
  gap: { seconds: 30, edit: (_c, n, x) => (n >= s(8) && n < s(19) ? 0 : x), at: [s(8), s(19)], channel: null },
  // Five runs of 10 samples flat at full scale in L, 1 s apart.
  clip: {
    seconds: 20,
    edit: (c, n, x) => (c === 0 && n >= s(5) && (n - s(5)) % RATE < 10 && n < s(10) ? 1 : x),
    at: [s(5), s(9) + 10],
    channel: 0,
  },
  // R is -L for 6 s: correlation -1, an anti-phase passage.
  phase: {
    seconds: 20,
    edit: (c, n, x, left) => (c === 1 && n >= s(8) && n < s(14) ? -left : x),
    at: [s(8), s(14)],
    channel: null,
  },
  // R is -L throughout: an inverted channel.
  inverted: { seconds: 20, edit: (c, _n, x, left) => (c === 1 ? -left : x), at: [0, s(20)], channel: 1 },
};

async function write(path: string, spec: Spec): Promise<void> {
  const total = s(spec.seconds);
  function* blocks() {
    for (let start = 0; start < total; start += 65536) {
      const frames = Math.min(65536, total - start);
      const data = [new Float32Array(frames), new Float32Array(frames)];
      for (let i = 0; i < frames; i++) {
        const n = start + i;
        const w = (2 * Math.PI * HZ * n) / RATE;
        // 10 ms fades, as EBU Tech 3341's true-peak signals have: a sine that starts at its peak would ring.
        const a = AMPLITUDE * Math.min(1, n / FADE, (total - n) / FADE);
        const left = a * Math.sin(w);
        data[0][i] = spec.edit(0, n, left, left);
        data[1][i] = spec.edit(1, n, a * Math.cos(w), left);
      }
      yield data;
    }
  }
  await writeWavFile(path, { sampleRate: RATE, channels: 2, bitsPerSample: 24, float: false }, blocks());
}

export async function writeDefectFile(dir: string, name: DefectName): Promise<DefectFile> {
  const path = join(dir, `${name}.wav`);
  if (name === 'truncated') {
    // The second half of a 20 s file is missing: its header still declares 20 s.
    await write(path, SPECS.clean);
    const dataBytes = s(20) * 2 * 3;
    const header = statSync(path).size - dataBytes;
    const fd = openSync(path, 'r+');
    try {
      ftruncateSync(fd, header + dataBytes / 2);
    } finally {
      closeSync(fd);
    }
    return { path, atSample: s(10), endSample: s(10), channel: null };
  }
  const spec = SPECS[name];
  await write(path, spec);
  return { path, atSample: spec.at[0], endSample: spec.at[1], channel: spec.channel };
}
