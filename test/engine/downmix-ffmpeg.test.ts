// The downmix readings against ffmpeg (Debian's build): its pan filter folds the file down with the
// same gains, its ebur128 filter reads the result. ffmpeg prints integrated loudness and true peak
// to 0.1, so: integrated within 0.1 LU, true peak within 0.3 dB (different interpolation filters;
// the tolerances of ffmpeg-crosscheck.test.ts).
import { spawnSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { writeWavFile } from '../../src/encode/wav.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';
import { hasTool } from '../helpers/tools.ts';

const hasFfmpeg = hasTool('ffmpeg');
/** ITU-R BS.775 Table 2 / ATSC A/52 section 7.8: -3 dB; ffmpeg's pan takes it to 7 places. */
const GAIN = Math.SQRT1_2.toFixed(7);
const GAIN_DB = 20 * Math.log10(Number(GAIN));

function ffmpegEbur128(path: string, pan: string): { integrated: number; truePeak: number } {
  // Double samples before pan, so a fold-down over full scale is not clipped before it is read.
  const filter = `aformat=sample_fmts=dbl,${pan},ebur128=peak=true`;
  const result = spawnSync('ffmpeg', ['-nostdin', '-hide_banner', '-i', path, '-af', filter, '-f', 'null', '-'], {
    encoding: 'utf8',
  });
  const summary = result.stderr.slice(result.stderr.lastIndexOf('Summary:'));
  const read = (pattern: RegExp) => Number(pattern.exec(summary)?.[1]);
  return { integrated: read(/I:\s+(-?[\d.]+) LUFS/), truePeak: read(/Peak:\s+(-?[\d.]+) dBFS/) };
}

async function writeProgramme(path: string, channels: number, channelMask: number | undefined, seed: number) {
  const blocks = (function* () {
    for (const b of programmeBlocks({ sampleRate: 48000, channels, seconds: 30, seed }))
      yield b.channelData as Float32Array[];
  })();
  await writeWavFile(
    path,
    { sampleRate: 48000, channels, bitsPerSample: 24, float: false, ...(channelMask ? { channelMask } : {}) },
    blocks,
  );
}

describe.skipIf(!hasFfmpeg)('downmix readings agree with ffmpeg pan + ebur128', () => {
  const dir = mkdtempSync(join(tmpdir(), 'earmark-downmix-'));
  const options = {
    hash: false,
    analysis: { downmix: { enabled: true, centreGainDb: GAIN_DB, surroundGainDb: GAIN_DB } },
  };

  // WAVE channel masks (ksmedia.h SPEAKER_* bits): 0x3F is FL FR FC LFE BL BR, ffmpeg's "5.1";
  // 0x60F is FL FR FC LFE SL SR, ffmpeg's "5.1(side)". Both surround pairs are Ls/Rs to us.
  for (const [mask, layout, ls, rs] of [
    [0x3f, '5.1', 'BL', 'BR'],
    [0x60f, '5.1(side)', 'SL', 'SR'],
  ] as const) {
    it(`5.1 Lo/Ro, mask 0x${mask.toString(16)} (${layout}): integrated and true peak`, async () => {
      const path = join(dir, `programme-${mask}.wav`);
      await writeProgramme(path, 6, mask, mask);
      const pan = `pan=stereo|FL=FL+${GAIN}*FC+${GAIN}*${ls}|FR=FR+${GAIN}*FC+${GAIN}*${rs}`;
      const reference = ffmpegEbur128(path, pan);
      const ours = await analyzeFile(path, options);
      expect(ours.format.channelLabels).toEqual(['L', 'R', 'C', 'LFE', 'Ls', 'Rs']);
      expect(Number.isFinite(reference.integrated)).toBe(true);
      const loRo = ours.downmix.loRo;
      expect(loRo).not.toBeNull();
      expect(Math.abs(loRo!.integratedLufs! - reference.integrated)).toBeLessThanOrEqual(0.1);
      expect(Math.abs(loRo!.truePeakDbtp! - reference.truePeak)).toBeLessThanOrEqual(0.3);
    });
  }

  it('stereo mono sum L + R: integrated', async () => {
    const path = join(dir, 'programme-stereo.wav');
    await writeProgramme(path, 2, undefined, 7);
    const reference = ffmpegEbur128(path, 'pan=mono|c0=c0+c1');
    const ours = await analyzeFile(path, options);
    expect(Number.isFinite(reference.integrated)).toBe(true);
    expect(Math.abs(ours.downmix.mono!.integratedLufs! - reference.integrated)).toBeLessThanOrEqual(0.1);
    const stereo = ours.summary.integratedLufs!;
    expect(ours.downmix.mono!.compatibilityLossLu).toBeCloseTo(stereo - ours.downmix.mono!.integratedLufs!, 12);
  });
});
