// Every flag kind that has a value carries its worst value and unit in the report itself, so the
// page never guesses: head and tail silence (loudest sample), duplicate and inverted channels
// (correlation), declared loudness (measured minus declared, in LU or dB).
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { writeWavFile } from '../../src/encode/wav.ts';
import { builtinProfile } from '../../src/profiles/index.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';
import { writeDefectFile } from '../helpers/defect-files.ts';
import { checkFile, SAMPLE_RATE, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);
const r128 = builtinProfile('ebu-r128');

describe('flag worst values', () => {
  it('head silence of a -75 dBFS hum reads -75.0 dBFS; a digitally silent tail has no level (null)', async () => {
    const path = await writeTone(dir, {
      segments: [
        { seconds: 3, peakDbfs: -75 },
        { seconds: 6, peakDbfs: -20 },
        { seconds: 3, peakDbfs: null },
      ],
    });
    const report = await checkFile(path, r128);
    const head = report.flags.find((f) => f.kind === 'head_silence');
    const tail = report.flags.find((f) => f.kind === 'tail_silence');
    // 1 kHz at 48 kHz puts a sample on each crest, so the sample peak is the sine's peak (closed form).
    expect(head).toMatchObject({ unit: 'dBFS', startSample: 0 });
    expect(head?.worstValue).toBeCloseTo(-75, 2);
    expect(head?.message).toContain('worst -75.0 dBFS');
    expect(tail).toMatchObject({ worstValue: null, unit: null, endSample: 12 * SAMPLE_RATE });
  });

  it('an inverted channel carries its correlation (-1) with the unit "correlation"', async () => {
    const report = await checkFile((await writeDefectFile(dir, 'inverted')).path, r128);
    const inverted = report.flags.find((f) => f.kind === 'inverted_channel');
    expect(inverted).toMatchObject({ unit: 'correlation', channelName: '2 R', otherChannelName: '1 L' });
    // R = -L exactly: the Pearson correlation is -1 (closed form).
    expect(inverted?.worstValue).toBeCloseTo(-1, 6);
  });

  it('a declared loudness 3 LU off carries +3.0 LU (measured minus declared) as its worst value', async () => {
    // Stereo 1 kHz at -20 dBFS peak reads -20.0 LUFS (EBU Tech 3341 Table 1 case 1 style); bext declares -23.00.
    const path = join(dir, 'declared.wav');
    const blocks = [...toneBlocks({ sampleRate: SAMPLE_RATE, channels: 2, segments: [{ seconds: 5, peakDbfs: -20 }] })];
    await writeWavFile(
      path,
      {
        sampleRate: SAMPLE_RATE,
        channels: 2,
        bitsPerSample: 24,
        float: false,
        bextLoudness: { integratedLufs: -23, maxTruePeakDbtp: -20 },
      },
      blocks.map((b) => [...b.channelData]),
    );
    const report = await checkFile(path, r128);
    const mismatch = report.flags.find((f) => f.kind === 'declared_loudness_mismatch');
    expect(mismatch).toMatchObject({ unit: 'LU' });
    expect(mismatch?.worstValue).toBeCloseTo(3, 1);
  });
});
