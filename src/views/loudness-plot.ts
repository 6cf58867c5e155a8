// Loudness-over-time plot as an SVG string: a pure function of the report's series and flags,
// so it can be unit-tested and rendered on the server. Long programmes are reduced to a
// min/max pair per pixel column, so a 3-hour file draws as fast as a 3-minute one.

export interface PlotSeries {
  pointsPerSecond: number;
  firstAtSeconds: number;
  lufs: readonly (number | null)[];
}

export interface PlotFlag {
  kind: string;
  /** A remark is shown but judged by no rule: drawn fainter, under the others. */
  severity: 'fail' | 'warn' | 'remark';
  startSeconds: number;
  endSeconds: number;
  label: string;
  /** Words for the kind, shown on its lane ("Clipping run"); the kind's own words when absent. */
  title?: string;
}

export interface PlotInput {
  durationSeconds: number;
  momentary: PlotSeries;
  shortTerm: PlotSeries;
  /** Target band drawn behind the curves. */
  targetBand?: { lowLufs: number; highLufs: number; targetLufs?: number };
  /** Ceiling for short-term loudness, drawn as a dashed line. */
  shortTermLimitLufs?: number;
  flags: readonly PlotFlag[];
  /** Per gating block (400 ms, one every 100 ms; point k ends at firstAtSeconds + k / pointsPerSecond): 1 where the detector heard speech. */
  speech?: { pointsPerSecond: number; firstAtSeconds: number; isSpeech: readonly number[] };
  /** Dialogue-gated loudness, drawn as a dotted line. */
  dialogueLufs?: number;
  /** Formats an axis time (the report's timecode). */
  formatTime: (seconds: number) => string;
  widthPx?: number;
  heightPx?: number;
}

const MARGIN = { left: 56, right: 16, top: 34, bottom: 40 };
/** One lane per flag kind above the curves: a label line, then the kind's markers. */
const LANE_PX = 24;
const LANE_LABEL_PX = 12;
const LANE_BAR_PX = 9;
const LANES_TOP_PX = 6;
const TIME_STEPS_SECONDS = [1, 2, 5, 10, 15, 30, 60, 120, 300, 600, 900, 1800, 3600, 7200];

export function escapeXml(text: string): string {
  return text.replace(
    /[&<>"']/g,
    (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string,
  );
}

const fmt = (value: number) => (Math.round(value * 10) / 10).toString();

/** Loudness axis: from 10 LU below the quietest gated value (or -60) to just above the loudest. */
function loudnessRange(input: PlotInput): [number, number] {
  let max = -Infinity;
  let min = Infinity;
  for (const series of [input.momentary, input.shortTerm]) {
    for (const v of series.lufs)
      if (v !== null && v > -70) {
        if (v > max) max = v;
        if (v < min) min = v;
      }
  }
  if (input.targetBand) {
    max = Math.max(max, input.targetBand.highLufs);
    min = Math.min(min, input.targetBand.lowLufs);
  }
  if (!Number.isFinite(max)) return [-60, 0];
  const top = Math.min(0, Math.ceil((max + 3) / 5) * 5);
  const bottom = Math.max(-70, Math.floor((Math.min(min, top - 20) - 2) / 10) * 10);
  return [bottom, top];
}

/** At most one min/max pair per pixel column; a null value breaks the line. */
function polyline(series: PlotSeries, x: (s: number) => number, y: (l: number) => number): string[] {
  const paths: string[] = [];
  let points: string[] = [];
  let column = Number.NaN;
  let columnX = 0;
  let low = 0;
  let high = 0;
  const flushColumn = () => {
    if (Number.isNaN(column)) return;
    points.push(`${fmt(columnX)},${fmt(y(high))}`);
    if (low !== high) points.push(`${fmt(columnX)},${fmt(y(low))}`);
    column = Number.NaN;
  };
  const breakLine = () => {
    flushColumn();
    if (points.length > 1) paths.push(points.join(' '));
    points = [];
  };
  series.lufs.forEach((v, i) => {
    if (v === null) {
      breakLine();
      return;
    }
    const px = x(series.firstAtSeconds + i / series.pointsPerSecond);
    const c = Math.floor(px);
    if (c !== column) {
      flushColumn();
      column = c;
      columnX = px;
      low = v;
      high = v;
      return;
    }
    if (v < low) low = v;
    if (v > high) high = v;
  });
  breakLine();
  return paths;
}

const SPEECH_LANE_PX = 6;

// Presentation attributes, so plot.svg opened on its own is drawn as on the page (the page's
// stylesheet overrides them: CSS wins over presentation attributes). Colours from earmark.css.
const PAINT: Record<string, string> = {
  'em-plot-bg': 'fill="#fbf8f1" stroke="#d9d2c3"',
  'em-target-band': 'fill="#e8dec6"',
  'em-target-line': 'stroke="#b9a77c" stroke-dasharray="4 3"',
  'em-grid': 'stroke="#d9d2c3" stroke-width="0.5"',
  'em-tick': 'stroke="#59626e"',
  'em-axis-label': 'fill="#59626e" font-family="sans-serif" font-size="11"',
  'em-axis-title': 'fill="#59626e" font-family="sans-serif" font-size="11"',
  'em-limit-line': 'stroke="#7d3f73" stroke-dasharray="6 3"',
  'em-momentary': 'fill="none" stroke="#97a6b6" stroke-width="1"',
  'em-short-term': 'fill="none" stroke="#1c6e7d" stroke-width="2"',
  'em-speech': 'fill="#b5792c" opacity="0.7"',
  'em-dialogue-line': 'stroke="#b5792c" stroke-width="1.5"',
  'em-lane-bg': 'fill="#f4f1ea"',
  'em-lane-label': 'fill="#59626e" font-family="sans-serif" font-size="10"',
  'em-cursor': 'stroke="#1f2833" stroke-width="2"',
};
const FLAG_FILL: Record<string, string> = {
  clipping: '#a33a2f',
  true_peak_over: '#c27f0e',
  loud_short_term: '#7d3f73',
  loud_momentary: '#7d3f73',
  phase_problem: '#3f6b3c',
  inverted_channel: '#3f6b3c',
  duplicate_channel: '#3f6b3c',
};
/** Each painted element's attributes go at the end of its opening tag. */
const paint = (svg: string) =>
  svg.replace(/(<[a-z]+ [^>]*?class="(em-[a-z-]+)"[^>]*?)(\/?>)/g, (all, head: string, name: string, end: string) =>
    PAINT[name] ? `${head} ${PAINT[name]}${end}` : all,
  );

/** One bar per run of speech blocks along the plot's floor, under the curves. */
function speechLane(
  speech: NonNullable<PlotInput['speech']>,
  x: (seconds: number) => number,
  top: number,
  formatTime: (seconds: number) => string,
): string[] {
  const step = 1 / speech.pointsPerSecond;
  const blockSeconds = speech.firstAtSeconds;
  const runs: [number, number][] = [];
  speech.isSpeech.forEach((v, k) => {
    if (v !== 1) return;
    const start = k * step;
    const end = start + blockSeconds;
    const last = runs.at(-1);
    if (last && start <= last[1]) last[1] = end;
    else runs.push([start, end]);
  });
  return runs.map(
    ([start, end]) =>
      `<rect class="em-speech" x="${fmt(x(start))}" y="${top}" width="${fmt(Math.max(1, x(end) - x(start)))}" height="${SPEECH_LANE_PX}"><title>Speech ${escapeXml(formatTime(start))} to ${escapeXml(formatTime(end))}</title></rect>`,
  );
}

interface Lane {
  kind: string;
  title: string;
  /** The strictest severity in the lane. */
  severity: PlotFlag['severity'];
  flags: { flag: PlotFlag; index: number }[];
}

const rank = (s: PlotFlag['severity']) => (s === 'fail' ? 0 : s === 'warn' ? 1 : 2);

/** One lane per kind: the strictest first, then by first appearance. */
function flagLanes(flags: readonly PlotFlag[]): Lane[] {
  const byKind = new Map<string, Lane>();
  flags.forEach((flag, index) => {
    let lane = byKind.get(flag.kind);
    if (!lane) {
      lane = { kind: flag.kind, title: '', severity: flag.severity, flags: [] };
      byKind.set(flag.kind, lane);
    }
    if (!lane.title && flag.title) lane.title = flag.title;
    if (rank(flag.severity) < rank(lane.severity)) lane.severity = flag.severity;
    lane.flags.push({ flag, index });
  });
  for (const lane of byKind.values()) lane.title ||= lane.kind.replace(/_/g, ' ');
  return [...byKind.values()].sort((a, b) => rank(a.severity) - rank(b.severity));
}

const fillOf = (kind: string) => FLAG_FILL[kind] ?? '#6b6f7e';

/** A labelled strip with one marker per flag; remarks first, so a fail or warn is never painted over by one. */
function laneParts(lane: Lane, k: number, top: number, x: (s: number) => number, plotWidth: number): string[] {
  const left = x(0);
  const n = lane.flags.length;
  const parts = [
    `<g class="em-lane em-lane-${escapeXml(lane.kind)}" data-kind="${escapeXml(lane.kind)}" data-lane="${k}">`,
    `<rect class="em-lane-bg" x="${left}" y="${top + LANE_LABEL_PX + 1}" width="${plotWidth}" height="${LANE_BAR_PX}"/>`,
    `<text class="em-lane-label" x="${left}" y="${top + LANE_LABEL_PX - 2}">${escapeXml(lane.title)} · ${n} flag${n === 1 ? '' : 's'}</text>`,
  ];
  const order = [...lane.flags].sort(
    (a, b) => Number(b.flag.severity === 'remark') - Number(a.flag.severity === 'remark') || a.index - b.index,
  );
  for (const { flag, index } of order) {
    const start = x(flag.startSeconds);
    const markerWidth = Math.max(3, x(flag.endSeconds) - start);
    // The opacity is an attribute, not only CSS, so the SVG fetched on its own shows it too.
    parts.push(
      `<g class="em-flag em-flag-${escapeXml(flag.kind)} em-sev-${flag.severity}" data-flag-index="${index}"${flag.severity === 'remark' ? ' opacity="0.45"' : ''} fill="${fillOf(flag.kind)}">` +
        `<rect x="${fmt(start)}" y="${top + LANE_LABEL_PX + 1}" width="${fmt(markerWidth)}" height="${LANE_BAR_PX}"/>` +
        `<title>${escapeXml(flag.label)}</title></g>`,
    );
  }
  parts.push('</g>');
  return parts;
}

/**
 * The lane's spans as one path of joined pixel intervals, faint, for the ground under the curves.
 * A whole-file finding (a DC offset, a dead channel) says nothing about where: its lane shows it.
 */
function spanParts(lane: Lane, x: (s: number) => number, plotTop: number, plotHeight: number): string[] {
  const whole = x(Number.POSITIVE_INFINITY) - x(0) - 1;
  const intervals = lane.flags
    .filter(({ flag }) => x(flag.endSeconds) - x(flag.startSeconds) < whole)
    .map(({ flag }) => {
      const start = x(flag.startSeconds);
      return [start, Math.max(start + 1, x(flag.endSeconds))] as [number, number];
    })
    .sort((a, b) => a[0] - b[0]);
  const joined: [number, number][] = [];
  for (const [a, b] of intervals) {
    const last = joined.at(-1);
    if (last && a <= last[1] + 1) last[1] = Math.max(last[1], b);
    else joined.push([a, b]);
  }
  if (joined.length === 0) return [];
  const d = joined.map(([a, b]) => `M${fmt(a)} ${plotTop}h${fmt(b - a)}v${plotHeight}h${fmt(a - b)}z`).join('');
  const opacity = lane.severity === 'remark' ? 0.06 : 0.12;
  return [
    `<path class="em-flag-span em-flag-span-${escapeXml(lane.kind)}" data-kind="${escapeXml(lane.kind)}" d="${d}" fill="${fillOf(lane.kind)}" opacity="${opacity}"/>`,
  ];
}

export function renderLoudnessPlot(input: PlotInput): string {
  const width = input.widthPx ?? 960;
  const lanes = flagLanes(input.flags);
  // The curves keep their height; each lane adds its own above them.
  const plotHeight = (input.heightPx ?? 320) - MARGIN.top - MARGIN.bottom;
  const lanesTop = LANES_TOP_PX;
  const laneTop = (k: number) => lanesTop + k * LANE_PX;
  const plotTop = Math.max(MARGIN.top, laneTop(lanes.length) + 6);
  const height = plotTop + plotHeight + MARGIN.bottom;
  const plotLeft = MARGIN.left;
  const plotWidth = width - MARGIN.left - MARGIN.right;
  const duration = Math.max(input.durationSeconds, 1e-3);
  const [bottomLufs, topLufs] = loudnessRange(input);
  const x = (seconds: number) => plotLeft + (Math.min(Math.max(seconds, 0), duration) / duration) * plotWidth;
  const y = (lufs: number) =>
    plotTop + ((topLufs - Math.min(Math.max(lufs, bottomLufs), topLufs)) / (topLufs - bottomLufs)) * plotHeight;
  const parts: string[] = [];
  parts.push(
    `<svg xmlns="http://www.w3.org/2000/svg" class="em-plot" viewBox="0 0 ${width} ${height}" role="img" aria-labelledby="em-plot-svg-title">`,
  );
  const remarks = input.flags.filter((f) => f.severity === 'remark').length;
  const problems = input.flags.length - remarks;
  parts.push(
    `<title id="em-plot-svg-title">Momentary and short-term loudness over ${escapeXml(input.formatTime(duration))}, with ${problems} flagged problem${problems === 1 ? '' : 's'}${remarks ? ` and ${remarks} remark${remarks === 1 ? '' : 's'}` : ''}</title>`,
  );
  parts.push(`<rect class="em-plot-bg" x="${plotLeft}" y="${plotTop}" width="${plotWidth}" height="${plotHeight}"/>`);
  if (input.targetBand) {
    const { lowLufs, highLufs, targetLufs } = input.targetBand;
    parts.push(
      `<rect class="em-target-band" x="${plotLeft}" y="${fmt(y(highLufs))}" width="${plotWidth}" height="${fmt(y(lowLufs) - y(highLufs))}"><title>Target band ${fmt(lowLufs)} to ${fmt(highLufs)} LUFS</title></rect>`,
    );
    if (targetLufs !== undefined)
      parts.push(
        `<line class="em-target-line" x1="${plotLeft}" x2="${plotLeft + plotWidth}" y1="${fmt(y(targetLufs))}" y2="${fmt(y(targetLufs))}"/>`,
      );
  }
  for (let lufs = Math.ceil(bottomLufs / 10) * 10; lufs <= topLufs; lufs += 10) {
    parts.push(
      `<line class="em-grid" x1="${plotLeft}" x2="${plotLeft + plotWidth}" y1="${fmt(y(lufs))}" y2="${fmt(y(lufs))}"/>`,
    );
    parts.push(
      `<text class="em-axis-label" x="${plotLeft - 6}" y="${fmt(y(lufs) + 4)}" text-anchor="end">${lufs}</text>`,
    );
  }
  parts.push(
    `<text class="em-axis-title" x="12" y="${fmt(plotTop + plotHeight / 2)}" transform="rotate(-90 12 ${fmt(plotTop + plotHeight / 2)})" text-anchor="middle">LUFS</text>`,
  );
  const step = TIME_STEPS_SECONDS.find((s) => duration / s <= 8) ?? 7200;
  for (let t = 0; t <= duration + 1e-9; t += step) {
    parts.push(
      `<line class="em-tick" x1="${fmt(x(t))}" x2="${fmt(x(t))}" y1="${plotTop + plotHeight}" y2="${plotTop + plotHeight + 5}"/>`,
    );
    // A label at the right edge hangs inward, so it is not cut off.
    const anchor = x(t) > plotLeft + plotWidth - 30 ? 'end' : 'middle';
    parts.push(
      `<text class="em-axis-label" x="${fmt(x(t))}" y="${plotTop + plotHeight + 18}" text-anchor="${anchor}">${escapeXml(input.formatTime(t))}</text>`,
    );
  }
  if (input.shortTermLimitLufs !== undefined) {
    parts.push(
      `<line class="em-limit-line" x1="${plotLeft}" x2="${plotLeft + plotWidth}" y1="${fmt(y(input.shortTermLimitLufs))}" y2="${fmt(y(input.shortTermLimitLufs))}"/>`,
    );
  }
  // Each kind's spans, joined, under the curves: hundreds of flags tint the ground, never hide a line.
  parts.push(...lanes.flatMap((lane) => spanParts(lane, x, plotTop, plotHeight)));
  if (input.speech) parts.push(...speechLane(input.speech, x, plotTop + plotHeight - SPEECH_LANE_PX, input.formatTime));
  if (input.dialogueLufs !== undefined)
    parts.push(
      `<line class="em-dialogue-line" x1="${plotLeft}" x2="${plotLeft + plotWidth}" y1="${fmt(y(input.dialogueLufs))}" y2="${fmt(y(input.dialogueLufs))}" stroke-dasharray="2 3"><title>Dialogue loudness ${fmt(input.dialogueLufs)} LUFS</title></line>`,
    );
  for (const points of polyline(input.momentary, x, y))
    parts.push(`<polyline class="em-momentary" points="${points}"/>`);
  for (const points of polyline(input.shortTerm, x, y))
    parts.push(`<polyline class="em-short-term" points="${points}"/>`);
  parts.push(...lanes.flatMap((lane, k) => laneParts(lane, k, laneTop(k), x, plotWidth)));
  parts.push(
    `<line id="em-plot-cursor" class="em-cursor" x1="${plotLeft}" x2="${plotLeft}" y1="${lanesTop}" y2="${plotTop + plotHeight}" data-plot-left="${plotLeft}" data-plot-width="${plotWidth}" data-duration="${duration}" visibility="hidden"/>`,
  );
  parts.push('</svg>');
  return paint(parts.join(''));
}
