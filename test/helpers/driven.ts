// A heavily clipped stereo file: a 220 Hz + 331 Hz mix driven 30x (L) and a 440 Hz sine driven 12x
// (R) into hard clipping at full scale, so every half-cycle is a clip run (over 1000 runs a second).

import { join } from 'node:path';
import { writeWavFile } from '../../src/encode/wav.ts';

const RATE = 48000;

export async function writeDriven(dir: string, seconds: number, name = 'driven.wav'): Promise<string> {
  const path = join(dir, name);
  function* blocks() {
    for (let b = 0; b < seconds; b++) {
      const l = new Float32Array(RATE);
      const r = new Float32Array(RATE);
      for (let i = 0; i < RATE; i++) {
        const t = (b * RATE + i) / RATE;
        const x = 30 * (0.5 * Math.sin(2 * Math.PI * 220 * t) + 0.3 * Math.sin(2 * Math.PI * 331 * t));
        l[i] = Math.max(-1, Math.min(1, x));
        r[i] = Math.max(-1, Math.min(1, 12 * Math.sin(2 * Math.PI * 440 * t + 1)));
      }
      yield [l, r];
    }
  }
  await writeWavFile(path, { sampleRate: RATE, channels: 2, bitsPerSample: 24, float: false }, blocks());
  return path;
}
