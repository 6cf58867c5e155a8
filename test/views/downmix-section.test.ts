// The report page's fold-down card: the shell in the page, and its rows (pure, no browser).
import { describe, expect, it } from 'vitest';
import type { DownmixReadings } from '../../src/engine/document.ts';
import { channelLoudnessRows, downmixRows } from '../../src/views/assets/downmix.js';
import { reportPage } from '../../src/views/pages.ts';

const gains = { centreGainDb: -3.0103, surroundGainDb: -3.0103, lfeGainDb: null };
const base: DownmixReadings = { measured: true, loRo: null, mono: null, channelIntegratedLufs: null, note: null };

describe('fold-down card', () => {
  it('sits in the report page once, hidden until filled', () => {
    const page = reportPage('job-1');
    expect(page.match(/id="em-downmix"/g)).toHaveLength(1);
    expect(page).toMatch(/<section id="em-downmix"[^>]* hidden>/);
    expect(page).toContain('Not summable');
  });

  it('lists the Lo/Ro readings with their gains', () => {
    const rows = downmixRows({
      ...base,
      loRo: {
        gains,
        integratedLufs: -23.04,
        truePeakDbtp: -1.26,
        truePeakAtSeconds: 3,
        clipRuns: 2,
        clippedSamples: 7,
        longestClipRunSamples: 4,
      },
    });
    expect(rows).toEqual([
      ['Lo/Ro integrated', '-23.0 LUFS'],
      ['Lo/Ro true peak', '-1.3 dBTP'],
      ['Lo/Ro clip runs', '2 (7 samples)'],
      ['Downmix gains', 'C -3.0 dB · surrounds -3.0 dB · LFE omitted'],
    ]);
  });

  it('lists the mono sum and its loss, or says it cancels', () => {
    expect(downmixRows({ ...base, mono: { integratedLufs: -20, compatibilityLossLu: -3.01, cancels: false } })).toEqual(
      [
        ['Mono sum (L + R)', '-20.0 LUFS'],
        ['Mono loss', '-3.0 LU'],
      ],
    );
    expect(downmixRows({ ...base, mono: { integratedLufs: null, compatibilityLossLu: null, cancels: true } })).toEqual([
      ['Mono sum (L + R)', 'cancels to silence'],
      ['Mono loss', 'total'],
    ]);
  });

  it('shows nothing when the analysis made no fold-down reading', () => {
    expect(downmixRows({ ...base, measured: false })).toEqual([]);
    expect(channelLoudnessRows({ downmix: base, channels: [] })).toEqual([]);
  });

  it('names each channel beside its own reading', () => {
    const channels = [{ label: 'L' }, { label: 'LFE' }];
    expect(channelLoudnessRows({ downmix: { ...base, channelIntegratedLufs: [-26.01, null] }, channels })).toEqual([
      ['1 L', '-26.0 LUFS'],
      ['2 LFE', 'below the gate'],
    ]);
  });
});
