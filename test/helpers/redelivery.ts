// A delivery that fails and its fix, for the re-delivery comparison tests: 12 s of stereo
// programme driven into hard clipping at full scale (too loud, clipped, over the true-peak
// ceiling), and the very same samples turned down by a chosen gain (no sample near full scale).
// 48 kHz 24-bit, as the broadcast delivery profiles ask; 3.5 MB, under the test service's limit.

import { join } from 'node:path';
import { writeWavFile } from '../../src/encode/wav.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';

export const REDELIVERY_RATE = 48_000;
export const REDELIVERY_SECONDS = 12;

function* clippedProgramme(gainDb: number): Generator<Float32Array[]> {
  const gain = 10 ** (gainDb / 20);
  for (const block of programmeBlocks({
    sampleRate: REDELIVERY_RATE,
    channels: 2,
    seconds: REDELIVERY_SECONDS,
    seed: 19,
    levelDbfs: -12,
  }))
    yield block.channelData.map((x) => x.map((v) => Math.max(-1, Math.min(1, v)) * gain));
}

/** The failing delivery: clipped at full scale. */
export async function writeHotDelivery(dir: string, name = 'river-documentary-hot.wav'): Promise<string> {
  const path = join(dir, name);
  await writeWavFile(
    path,
    { sampleRate: REDELIVERY_RATE, channels: 2, bitsPerSample: 24, float: false },
    clippedProgramme(0),
  );
  return path;
}

/** The fix: the same samples times 10^(gainDb/20). */
export async function writeFixedDelivery(
  dir: string,
  gainDb: number,
  name = 'river-documentary-fixed.wav',
): Promise<string> {
  const path = join(dir, name);
  await writeWavFile(
    path,
    { sampleRate: REDELIVERY_RATE, channels: 2, bitsPerSample: 24, float: false },
    clippedProgramme(gainDb),
  );
  return path;
}
