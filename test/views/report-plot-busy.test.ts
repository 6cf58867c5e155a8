// The plot of a generated report with hundreds of flags stays readable: one labelled lane per
// flag kind above the curves, and each kind's spans painted under the curves (earlier in the SVG,
// so beneath them in paint order), never a stacked block over them.
import { describe, expect, it } from 'vitest';
import { renderReportPlot } from '../../src/views/report-plot.ts';
import { BUSY_FLAG_COUNT, BUSY_KINDS, busyReport } from './busy-report.ts';

describe('plot of a report with hundreds of flags', () => {
  const report = busyReport();
  const svg = renderReportPlot(report);

  it('holds one marker per flag, in one lane per kind, the failing kinds on top', () => {
    expect(report.flags).toHaveLength(BUSY_FLAG_COUNT);
    expect(BUSY_FLAG_COUNT).toBeGreaterThan(400);
    expect(svg.match(/<g class="em-flag /g)).toHaveLength(BUSY_FLAG_COUNT);
    const lanes = [...svg.matchAll(/<g class="em-lane [^"]*" data-kind="([a-z_]+)" data-lane="(\d+)">/g)];
    expect(lanes).toHaveLength(BUSY_KINDS.length);
    const rank = { fail: 0, warn: 1, remark: 2 };
    const laneRanks = lanes.map((m) => rank[BUSY_KINDS.find((k) => k.kind === m[1])?.severity ?? 'remark']);
    expect(new Set(lanes.map((m) => m[1]))).toEqual(new Set(BUSY_KINDS.map((k) => k.kind)));
    expect(laneRanks).toEqual([...laneRanks].sort());
    for (const spec of BUSY_KINDS)
      expect(svg).toContain(`>${spec.title} · ${spec.flags} flag${spec.flags === 1 ? '' : 's'}</text>`);
    // Every marker sits in its own kind's lane: between the lane's opening and closing tags.
    for (const lane of svg.split('<g class="em-lane ').slice(1)) {
      const kind = /^[^"]*" data-kind="([a-z_]+)"/.exec(lane)?.[1];
      for (const m of lane.matchAll(/<g class="em-flag em-flag-([a-z_]+) /g)) expect(m[1]).toBe(kind);
    }
  });

  it('paints the spans beneath the curves: one faint path per kind, before the first curve', () => {
    const spans = [...svg.matchAll(/<path class="em-flag-span [^>]*>/g)];
    // The whole-file DC offset tints nothing: its lane says it all.
    expect(spans.map((s) => /data-kind="([a-z_]+)"/.exec(s[0])?.[1]).sort()).toEqual(
      BUSY_KINDS.map((k) => k.kind)
        .filter((k) => k !== 'dc_offset')
        .sort(),
    );
    const firstCurve = svg.indexOf('<polyline ');
    expect(firstCurve).toBeGreaterThan(0);
    for (const span of spans) {
      expect(span.index).toBeLessThan(firstCurve);
      const opacity = Number(/opacity="([\d.]+)"/.exec(span[0])?.[1]);
      expect(opacity).toBeGreaterThan(0);
      expect(opacity).toBeLessThanOrEqual(0.12);
    }
    // Even where every kind overlaps, the ground stays see-through: 1 - (1 - 0.12)^4 (1 - 0.06) < 0.55.
    const opacities = spans.map((s) => Number(/opacity="([\d.]+)"/.exec(s[0])?.[1]));
    expect(1 - opacities.reduce((clear, o) => clear * (1 - o), 1)).toBeLessThan(0.55);
  });

  it('keeps every lane marker above the curves area', () => {
    const plotTop = Number(/<rect class="em-plot-bg" x="\d+" y="(\d+)"/.exec(svg)?.[1]);
    for (const m of svg.matchAll(/data-flag-index="\d+"[^>]*><rect x="[^"]+" y="(\d+)" width="[^"]+" height="(\d+)"/g))
      expect(Number(m[1]) + Number(m[2])).toBeLessThanOrEqual(plotTop);
  });
});
