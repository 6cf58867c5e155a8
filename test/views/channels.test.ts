// The per-channel card's wording (assets/channels.js): units on every value, digital silence said
// as such, and columns only where the report has them.
import { describe, expect, it } from 'vitest';
import { channelNote, channelTable } from '../../src/views/assets/channels.js';
import { BUSY_CHANNELS, SILENT_CHANNEL } from './busy-report.ts';

describe('channel table', () => {
  it('gives peaks, RMS, loudness, DC, dropouts and clipping with units', () => {
    const table = channelTable({ channels: BUSY_CHANNELS, downmix: { channelIntegratedLufs: [-19.6, -20.1] } });
    expect(table.columns).toEqual([
      'Sample peak',
      'True peak',
      'Reconstructed peak',
      'RMS',
      'Loudness',
      'DC offset',
      'Dropouts',
      'Clipping',
    ]);
    expect(table.rows[0]).toEqual({
      name: '1 L',
      silent: false,
      values: [
        '0.0 dBFS',
        '0.6 dBTP',
        '0.7 dBTP',
        '-17.8 dBFS',
        '-19.6 LUFS',
        '-41.2 dBFS (0.87 % of full scale)',
        '30 dropouts, 0.150 s',
        '130 runs, 4212 samples',
      ],
    });
    expect(table.rows[1].values[5]).toBe('-80.0 dBFS (-0.01 % of full scale)');
  });

  it('says digital silence for a channel whose levels are null, and "below the gate" for a quiet one', () => {
    const quiet = { ...BUSY_CHANNELS[1], index: 1 };
    const table = channelTable({
      channels: [BUSY_CHANNELS[0], quiet, SILENT_CHANNEL],
      downmix: { channelIntegratedLufs: [-19.6, null, null] },
    });
    const silent = table.rows[2];
    expect(silent).toMatchObject({ name: '3 C', silent: true });
    expect(silent.values).toEqual([
      'digital silence',
      'digital silence',
      'digital silence',
      'digital silence',
      'digital silence',
      'digital silence',
      'none',
      'none',
    ]);
    expect(table.rows[1].values[4]).toBe('below the gate');
  });

  it('leaves out loudness when the report has no per-channel reading, and says the all-channel dropouts', () => {
    const table = channelTable({ channels: BUSY_CHANNELS, downmix: { channelIntegratedLufs: null } });
    expect(table.columns).not.toContain('Loudness');
    expect(channelNote({ summary: { allChannelDropouts: 2 } })).toBe(
      '2 dropouts in all channels at once (counted once, not in the rows above).',
    );
    expect(channelNote({ summary: { allChannelDropouts: 0 } })).toBe('');
  });
});
