import { describe, expect, it } from 'vitest';
import { escapeXml, renderLoudnessPlot, type PlotInput } from '../../src/views/loudness-plot.ts';

const seconds = (s: number) => `${s.toFixed(0)}s`;

function input(overrides: Partial<PlotInput> = {}): PlotInput {
  const momentary = Array.from({ length: 600 }, (_, i) => (i < 5 ? null : -23 + 3 * Math.sin(i / 20)));
  const shortTerm = Array.from({ length: 60 }, (_, i) => (i < 2 ? null : -23 + Math.sin(i / 5)));
  return {
    durationSeconds: 60,
    momentary: { pointsPerSecond: 10, firstAtSeconds: 0.1, lufs: momentary },
    shortTerm: { pointsPerSecond: 1, firstAtSeconds: 1, lufs: shortTerm },
    targetBand: { lowLufs: -24, highLufs: -22, targetLufs: -23 },
    flags: [
      { kind: 'clipping', severity: 'fail', startSeconds: 12, endSeconds: 12.01, label: 'Clipping <ch 1>' },
      { kind: 'silence', severity: 'warn', startSeconds: 30, endSeconds: 34, label: 'Silence 4 s' },
    ],
    formatTime: seconds,
    ...overrides,
  };
}

describe('renderLoudnessPlot', () => {
  it('paints itself: opened alone (no stylesheet) the curves are lines, not filled shapes, on a light ground', () => {
    const svg = renderLoudnessPlot(input());
    for (const m of svg.matchAll(/<polyline [^>]*>/g)) expect(m[0]).toContain('fill="none"');
    expect(svg).toMatch(/<rect class="em-plot-bg" [^>]*fill="#fbf8f1"/);
    expect(svg).toMatch(/<g class="em-flag em-flag-clipping [^>]*fill="#a33a2f"/);
    expect(svg).toMatch(/<text class="em-lane-label" [^>]*fill="#59626e"/);
    for (const m of svg.matchAll(/<path class="em-flag-span [^>]*>/g))
      expect(m[0]).toMatch(/fill="#[0-9a-f]{6}" opacity="0.12"/);
  });

  it('draws one speech bar per run of speech blocks (block k spans k/10 s to k/10 + 0.4 s) and the dialogue line', () => {
    // Blocks 10-19 (1.0 s to 2.3 s) and 50 (5.0 s to 5.4 s) are speech; the others are not.
    const isSpeech = Array.from({ length: 596 }, (_, k) => ((k >= 10 && k < 20) || k === 50 ? 1 : 0));
    const svg = renderLoudnessPlot(
      input({ speech: { pointsPerSecond: 10, firstAtSeconds: 0.4, isSpeech }, dialogueLufs: -24.5 }),
    );
    const bars = [...svg.matchAll(/<rect class="em-speech"[^>]*><title>Speech ([^<]*)<\/title>/g)].map((m) => m[1]);
    expect(bars).toEqual(['1s to 2s', '5s to 5s']);
    expect(svg).toContain('<title>Dialogue loudness -24.5 LUFS</title>');
    expect(renderLoudnessPlot(input())).not.toContain('em-speech');
  });

  it('draws one marker per flag, in order, with its label escaped', () => {
    const svg = renderLoudnessPlot(input());
    expect(svg.match(/class="em-flag /g)).toHaveLength(2);
    expect(svg).toContain('data-flag-index="0"');
    expect(svg).toContain('data-flag-index="1"');
    expect(svg).toContain('Clipping &lt;ch 1&gt;');
    expect(svg).not.toContain('<ch 1>');
  });

  it('draws remarks fainter and, in their lane, beneath fail and warn markers; counts them apart in the title', () => {
    const svg = renderLoudnessPlot(
      input({
        flags: [
          ...input().flags,
          { kind: 'clipping', severity: 'remark', startSeconds: 11, endSeconds: 14, label: '#3 Clipping (remark)' },
        ],
      }),
    );
    expect(svg).toMatch(
      /<g class="em-flag em-flag-clipping em-sev-remark" data-flag-index="2" opacity="0.45" fill="[^"]+">/,
    );
    expect(svg).not.toMatch(/em-sev-fail"[^>]*opacity/);
    // Painted first, so the fail marker at 12 s stays on top of it.
    expect(svg.indexOf('data-flag-index="2"')).toBeLessThan(svg.indexOf('data-flag-index="0"'));
    expect(svg).toContain('with 2 flagged problems and 1 remark</title>');
  });

  it('gives each flag kind a labelled lane, the strictest first, and grows the image by the lanes', () => {
    const svg = renderLoudnessPlot(
      input({
        flags: [
          { kind: 'dc_offset', severity: 'remark', startSeconds: 0, endSeconds: 60, label: 'DC', title: 'DC offset' },
          ...input().flags,
          { kind: 'clipping', severity: 'fail', startSeconds: 40, endSeconds: 40.01, label: 'Clip 2', title: 'Clip' },
        ],
      }),
    );
    const lanes = [...svg.matchAll(/<g class="em-lane [^"]*" data-kind="([a-z_]+)" data-lane="(\d+)">/g)];
    expect(lanes.map((m) => m[1])).toEqual(['clipping', 'silence', 'dc_offset']);
    // The lane's words come from the first flag with a title; a flag without one lends its kind.
    expect(svg).toContain('>Clip · 2 flags</text>');
    expect(svg).toContain('>silence · 1 flag</text>');
    // The curves keep their 246 px (320 - 34 - 40); three lanes of 24 px from y = 6, 6 px apart, then the curves and the axis.
    expect(svg).toContain('viewBox="0 0 960 370"');
    expect(svg).toContain('<rect class="em-plot-bg" x="56" y="84" width="888" height="246"');
  });

  it('places a flag at its time on the axis: 30 s of 60 s is half-way across the plot area', () => {
    const svg = renderLoudnessPlot(input({ widthPx: 1000 }));
    // plot area: x from 56 to 1000-16 = 984, width 928; 30 s -> 56 + 464 = 520.
    expect(svg).toMatch(/data-flag-index="1" fill="[^"]+"><rect x="520"/);
  });

  it('draws the target band and the loudness curves, breaking lines at null values', () => {
    const svg = renderLoudnessPlot(input());
    expect(svg).toContain('class="em-target-band"');
    expect(svg.match(/class="em-momentary"/g)?.length).toBe(1);
    const gap = input({
      momentary: {
        pointsPerSecond: 10,
        firstAtSeconds: 0.1,
        lufs: [...Array(200).fill(-20), ...Array(200).fill(null), ...Array(200).fill(-20)],
      },
    });
    expect(renderLoudnessPlot(gap).match(/class="em-momentary"/g)?.length).toBe(2);
  });

  it('labels the time axis with the given formatter and keeps at most about 9 ticks', () => {
    const svg = renderLoudnessPlot(input());
    expect(svg).toContain('>0s<');
    expect(svg).toContain('>60s<');
    expect((svg.match(/class="em-tick"/g) ?? []).length).toBeLessThanOrEqual(9);
  });

  it('reduces a 3-hour series to at most two points per pixel column', () => {
    const long = Array.from({ length: 3 * 3600 * 10 }, (_, i) => -30 + 10 * Math.sin(i / 50));
    const svg = renderLoudnessPlot(
      input({
        durationSeconds: 3 * 3600,
        momentary: { pointsPerSecond: 10, firstAtSeconds: 0.1, lufs: long },
        widthPx: 800,
      }),
    );
    const points = /class="em-momentary" points="([^"]*)"/.exec(svg)?.[1].split(' ') ?? [];
    expect(points.length).toBeLessThanOrEqual(2 * (800 - 56 - 16 + 1));
    expect(points.length).toBeGreaterThan(700);
  });

  it('is a pure function: same input, same SVG; and valid for an all-silent file', () => {
    expect(renderLoudnessPlot(input())).toBe(renderLoudnessPlot(input()));
    const silent = renderLoudnessPlot(
      input({
        momentary: { pointsPerSecond: 10, firstAtSeconds: 0.1, lufs: Array(100).fill(null) },
        shortTerm: { pointsPerSecond: 1, firstAtSeconds: 1, lufs: Array(10).fill(null) },
        targetBand: undefined,
        flags: [],
      }),
    );
    expect(silent).toContain('<svg');
    expect(silent).not.toContain('NaN');
    expect(silent).not.toContain('Infinity');
  });

  it('escapes XML special characters', () => {
    expect(escapeXml(`<a href="x">&'</a>`)).toBe('&lt;a href=&quot;x&quot;&gt;&amp;&#39;&lt;/a&gt;');
  });
});
