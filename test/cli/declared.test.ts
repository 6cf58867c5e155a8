// The text summary names what the file declares beside our reading (bext v2, EBU Tech 3285 v2).
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, expect, it } from 'vitest';
import { formatAnalysis } from '../../src/cli/format-analysis.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-cli-declared-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

it('prints one line per declaring source, declared beside measured', async () => {
  const path = join(dir, 'declared.wav');
  // Stereo 1 kHz at -20 dBFS peak reads -20.0 LUFS (EBU Tech 3341 Table 1 case 1 style).
  const blocks = [...toneBlocks({ sampleRate: 48000, channels: 2, segments: [{ seconds: 3, peakDbfs: -20 }] })];
  await writeWavFile(
    path,
    { sampleRate: 48000, channels: 2, bitsPerSample: 24, float: false, bextLoudness: { integratedLufs: -23 } },
    blocks.map((b) => [...b.channelData]),
  );
  const text = formatAnalysis(await analyzeFile(path));
  expect(text).toContain('  Declared (bext)       integrated loudness declared -23.00 LUFS, measured -20.0 LUFS\n');
});
