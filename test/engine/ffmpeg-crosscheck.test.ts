// Cross-check against ffmpeg's ebur128 filter (Debian's ffmpeg; CI installs it), on generated
// programme-like WAV files. ffmpeg prints integrated loudness, LRA and true peak to 0.1.
// Tolerances: integrated 0.1 LU (its print precision plus rounding), LRA 0.5 LU (ffmpeg's LRA
// uses a histogram of 0.1 LU bins), true peak 0.3 dB (different interpolation filters).
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { writeWavFile } from '../../src/encode/wav.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');

function ffmpegEbur128(path: string): { integrated: number; lra: number; truePeak: number } {
  const result = spawnSync(
    'ffmpeg',
    ['-nostdin', '-hide_banner', '-i', path, '-af', 'ebur128=peak=true', '-f', 'null', '-'],
    { encoding: 'utf8' },
  );
  const summary = result.stderr.slice(result.stderr.lastIndexOf('Summary:'));
  const read = (pattern: RegExp) => Number(pattern.exec(summary)?.[1]);
  return {
    integrated: read(/I:\s+(-?[\d.]+) LUFS/),
    lra: read(/LRA:\s+(-?[\d.]+) LU/),
    truePeak: read(/Peak:\s+(-?[\d.]+) dBFS/),
  };
}

describe.skipIf(!hasFfmpeg)('agreement with ffmpeg ebur128', () => {
  const dir = mkdtempSync(join(tmpdir(), 'earmark-ffmpeg-'));
  for (const [sampleRate, channels] of [
    [44100, 2],
    [48000, 1],
    [48000, 2],
    [96000, 2],
  ] as const) {
    it(`${sampleRate} Hz ${channels} ch, 24-bit: integrated, LRA and true peak`, async () => {
      const path = join(dir, `programme-${sampleRate}-${channels}.wav`);
      const blocks = (function* () {
        for (const b of programmeBlocks({ sampleRate, channels, seconds: 75, seed: sampleRate + channels }))
          yield b.channelData as Float32Array[];
      })();
      await writeWavFile(path, { sampleRate, channels, bitsPerSample: 24, float: false }, blocks);
      const reference = ffmpegEbur128(path);
      const ours = await analyzeFile(path, { hash: false });
      expect(Number.isFinite(reference.integrated)).toBe(true);
      expect(Math.abs(ours.summary.integratedLufs! - reference.integrated)).toBeLessThanOrEqual(0.1);
      expect(Math.abs(ours.summary.loudnessRangeLu! - reference.lra)).toBeLessThanOrEqual(0.5);
      expect(Math.abs(ours.summary.truePeakDbtp! - reference.truePeak)).toBeLessThanOrEqual(0.3);
    });
  }
  it('ffmpeg is the Debian build we expect to compare against', () => {
    expect(execFileSync('ffmpeg', ['-version'], { encoding: 'utf8' })).toMatch(/ffmpeg version/);
  });
});
