// The head strip (views/assets/head-strip.js): a pure SVG of the report's head readings.
import { describe, expect, it } from 'vitest';
import { hasHead, headFacts, headStripSvg } from '../../src/views/assets/head-strip.js';
import type { QcReport } from '../../src/profiles/report.ts';
import { sampleReport } from './sample-report.ts';

describe('head strip', () => {
  it('draws the tone per channel, the pop and the programme start with their timecodes', () => {
    const report = sampleReport();
    const svg = headStripSvg(report, 720);
    expect(svg.match(/<rect class="em-head-tone"/g)).toHaveLength(2);
    expect(svg).toContain('<title>1000.0 Hz, -18.00 dBFS, 0.000-1.000 s</title>');
    expect(svg).toContain('pop 00:00:02:00');
    expect(svg).toContain('programme 00:00:04:00');
    // Span: programme start + 1 s = 5 s over 660 px from x = 48: the programme line at 48 + 4/5 * 660.
    expect(svg).toContain('<line class="em-head-start" x1="576"');
    expect(headFacts(report)).toEqual([
      'Line-up tone 1000.0 Hz at -18.00 dBFS (peak -18.00 dBFS), 00:00:00:00 to 00:00:01:00, 2 channels',
      'Sync pop at 00:00:02:00 (1000 Hz)',
      'Programme starts at 00:00:04:00',
    ]);
  });

  it('is left out when the report has no head readings (older reports, or nothing found)', () => {
    const report = sampleReport();
    expect(hasHead(report)).toBe(true);
    expect(
      hasHead({ ...report, head: { ...report.head, toneSegments: [], headPop: null, programmeStartSeconds: null } }),
    ).toBe(false);
    const { head: _head, ...older } = report;
    expect(hasHead(older as never)).toBe(false);
  });

  it('escapes what it prints', () => {
    const report = sampleReport();
    const channels = [{ label: '<x>' }, { label: 'R' }] as unknown as QcReport['channels'];
    const svg = headStripSvg({ ...report, channels });
    expect(svg).not.toContain('<x>');
    expect(svg).toContain('&lt;x&gt;');
  });
});
