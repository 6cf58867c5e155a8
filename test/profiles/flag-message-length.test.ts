// A flag's message gives a short span in milliseconds, as the report page's flag table does,
// never "(0.000 s)". Sample counts over the rate: 10 samples at 48 kHz are 0.208 ms.

import { afterAll, describe, expect, it } from 'vitest';
import { lengthText as pageLengthText } from '../../src/views/assets/flag-table.js';
import { lengthText } from '../../src/profiles/flags.ts';
import { parseProfile } from '../../src/profiles/index.ts';
import { checkFile, SAMPLE_RATE, setRange, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

describe('flag message lengths', () => {
  it('writes spans under 0.1 s in ms and the rest in s, exactly as the page table does', () => {
    for (const seconds of [24 / 48000, 10 / 48000, 0.0005, 0.05, 0.0999, 0.1, 0.3, 2.5, 125.125])
      expect(lengthText(seconds)).toBe(pageLengthText(seconds));
    expect(lengthText(24 / 48000)).toBe('0.5 ms');
    expect(lengthText(0.1)).toBe('0.100 s');
  });

  it('a 10-sample clip run reads "(0.2 ms)" in its message', async () => {
    expect(SAMPLE_RATE).toBe(48000);
    const profile = parseProfile({
      id: 'test-short',
      name: 'Short spans',
      version: '1.0.0',
      description: 'test',
      basis: 'house rule',
      rules: [
        { id: 'no-clips', type: 'clipping', severity: 'fail', maxRuns: 0, minRunSamples: 3 },
        { id: 'tp-high', type: 'true-peak', severity: 'fail', maxDbtp: 3 },
      ],
    });
    const path = await writeTone(dir, {
      segments: [{ seconds: 5, peakDbfs: -20 }],
      edit: (data, startFrame) => setRange(96000, 96010, 1, [0])(data, startFrame),
    });
    const report = await checkFile(path, profile);
    const clip = report.flags.find((f) => f.kind === 'clipping');
    expect(clip?.endSample).toBe(96010);
    expect(clip?.message).toContain('(0.2 ms)');
    expect(clip?.message).not.toContain('0.000 s');
  });
});
