// From a version-2 report to the plot: one marker per flag with the page's own words, remarks fainter.
import { describe, expect, it } from 'vitest';
import { flagLabel } from '../../src/views/assets/format.js';
import { escapeXml, renderLoudnessPlot } from '../../src/views/loudness-plot.ts';
import { plotInputFor, renderReportPlot } from '../../src/views/report-plot.ts';
import { sampleFlags, sampleReport } from './sample-report.ts';

describe('report plot', () => {
  it('marks every flag, with its number, title, severity, channel, count and worst value as the marker title', () => {
    const svg = renderReportPlot(sampleReport());
    expect(svg.match(/<g class="em-flag /g)).toHaveLength(sampleFlags.length);
    for (const flag of sampleFlags) expect(svg).toContain(`<title>${escapeXml(flagLabel(flag))}</title>`);
    expect(svg).toContain(
      '#2 True peak over the ceiling (warn), 00:00:01:05 – 00:00:01:13, ch 1 L, × 3, worst -0.4 dBTP',
    );
  });

  it('passes remarks through as remarks and draws them fainter', () => {
    const input = plotInputFor(sampleReport());
    expect(input.flags.map((f) => f.severity)).toEqual(['fail', 'warn', 'remark', 'remark']);
    const svg = renderReportPlot(sampleReport());
    expect(svg.match(/em-sev-remark" data-flag-index="\d" opacity="0.45"/g)).toHaveLength(2);
  });

  it("places markers in the file's time: the 5 s cut of a 20 s file is a quarter of the way across", () => {
    const input = plotInputFor(sampleReport(), 1000);
    expect(input.durationSeconds).toBe(20);
    // plot area 56..984 (928 px): 5 s of 20 s -> 56 + 232 = 288.
    expect(renderLoudnessPlot(input)).toMatch(/data-flag-index="0" fill="[^"]+"><rect x="288"/);
    expect(input.formatTime(5)).toBe('00:00:05:00');
  });
});
