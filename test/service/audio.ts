// Generated test audio: 997 Hz stereo sines at chosen peak levels. ITU-R BS.1770-5 (s.2.1 note):
// a 0 dBFS 997 Hz sine in one front channel reads -3.01 LKFS, so the same sine in both channels
// of a stereo file at peak P dBFS reads P LUFS (two channels add 3.01 dB).

import { spawnSync } from 'node:child_process';
import { writeWavFile } from '../../src/encode/wav.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';

export const SAMPLE_RATE = 48_000;

export async function writeSine(path: string, peakDbfs: number, seconds: number): Promise<string> {
  const blocks = function* () {
    for (const block of toneBlocks({
      sampleRate: SAMPLE_RATE,
      channels: 2,
      segments: [{ seconds, peakDbfs, frequencyHz: 997 }],
    }))
      yield [...block.channelData];
  };
  await writeWavFile(path, { sampleRate: SAMPLE_RATE, channels: 2, bitsPerSample: 24, float: false }, blocks());
  return path;
}

/** FLAC through ffmpeg (lossless, so the levels are those of the WAV). */
export function toFlac(wavPath: string, flacPath: string): string {
  const r = spawnSync('ffmpeg', ['-v', 'error', '-y', '-i', wavPath, '-c:a', 'flac', flacPath]);
  if (r.status !== 0) throw new Error(`ffmpeg failed: ${r.stderr.toString()}`);
  return flacPath;
}
