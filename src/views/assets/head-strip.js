// The head strip: a small timeline of the start of the file from the report's `head` readings:
// one row per channel with its line-up tone, the silence around it, the sync pop and the
// programme start, labelled with the report's timecodes. A pure function of the report (an SVG
// string), shared by the page and the tests.

const ESCAPES = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };
const esc = (text) => String(text).replace(/[&<>"']/g, (c) => ESCAPES[c]);
const num = (v) => (Math.round(v * 10) / 10).toString();
const MAX_ROWS = 8;

/** Whether the report has anything for the strip: a tone, a pop or a programme start. */
export function hasHead(report) {
  const head = report?.head;
  return Boolean(head && (head.toneSegments.length > 0 || head.headPop || head.programmeStartSeconds !== null));
}

/** Words for screen readers and the list under the strip. */
export function headFacts(report) {
  const head = report.head;
  const tc = report.headTimecode ?? {};
  const facts = [];
  const tones = head.toneSegments;
  if (tones.length > 0) {
    const main = tones.reduce((a, b) => (b.endSeconds - b.startSeconds > a.endSeconds - a.startSeconds ? b : a));
    const channels = new Set(tones.map((t) => t.channel)).size;
    facts.push(
      `Line-up tone ${main.frequencyHz.toFixed(1)} Hz at ${main.rmsAes17Db.toFixed(2)} dBFS (peak ${main.peakDbfs.toFixed(2)} dBFS), ${tc.toneStart ?? ''} to ${tc.toneEnd ?? ''}, ${channels} channel${channels === 1 ? '' : 's'}${head.toneIntoProgramme ? ', runs into the programme' : ''}`,
    );
  } else facts.push('No line-up tone');
  if (head.headPop)
    facts.push(
      `Sync pop at ${tc.headPop ?? head.headPop.startSeconds.toFixed(3)} (${Math.round(head.headPop.frequencyHz)} Hz)`,
    );
  if (head.programmeStartSeconds !== null)
    facts.push(`Programme starts at ${tc.programmeStart ?? head.programmeStartSeconds.toFixed(3)}`);
  if (head.tailPop) facts.push(`Tail pop at ${tc.tailPop ?? head.tailPop.startSeconds.toFixed(3)}`);
  return facts;
}

export function headStripSvg(report, widthPx = 720) {
  const head = report.head;
  const channels = Math.min(report.channels?.length ?? report.format.channels, MAX_ROWS);
  const ends = [
    head.programmeStartSeconds ?? 0,
    ...head.toneSegments.map((t) => t.endSeconds),
    head.headPop?.endSeconds ?? 0,
  ];
  const duration = report.format.durationSeconds ?? report.format.framesDecoded / report.format.sampleRate;
  const span = Math.max(0.5, Math.min(duration, Math.max(...ends) + 1));
  const left = 48;
  const right = 12;
  const top = 22;
  const rowPx = 12;
  const height = top + channels * rowPx + 34;
  const x = (s) => left + (Math.min(Math.max(s, 0), span) / span) * (widthPx - left - right);
  const y = (c) => top + c * rowPx;
  const parts = [];
  const programme = head.programmeStartSeconds;
  // Head (silence unless marked) and programme backgrounds.
  parts.push(
    `<rect class="em-head-silence" x="${num(x(0))}" y="${top}" width="${num(x(programme ?? span) - x(0))}" height="${channels * rowPx}"/>`,
  );
  if (programme !== null)
    parts.push(
      `<rect class="em-head-programme" x="${num(x(programme))}" y="${top}" width="${num(x(span) - x(programme))}" height="${channels * rowPx}"/>`,
    );
  for (let c = 0; c < channels; c++) {
    const label = report.channels?.[c]?.label ?? String(c + 1);
    parts.push(
      `<text class="em-head-label" x="${left - 4}" y="${y(c) + rowPx - 3}" text-anchor="end">${esc(`${c + 1} ${label}`)}</text>`,
    );
  }
  for (const t of head.toneSegments) {
    if (t.channel >= channels) continue;
    const title = `${t.frequencyHz.toFixed(1)} Hz, ${t.rmsAes17Db.toFixed(2)} dBFS, ${t.startSeconds.toFixed(3)}-${t.endSeconds.toFixed(3)} s`;
    parts.push(
      `<rect class="em-head-tone${t.intoProgramme ? ' em-head-tone-into' : ''}" x="${num(x(t.startSeconds))}" y="${y(t.channel) + 1}" width="${num(Math.max(1, x(t.endSeconds) - x(t.startSeconds)))}" height="${rowPx - 2}"><title>${esc(title)}</title></rect>`,
    );
  }
  const tc = report.headTimecode ?? {};
  const marks = [];
  if (head.headPop) marks.push(['em-head-pop', head.headPop.startSeconds, `pop ${tc.headPop ?? ''}`]);
  if (programme !== null) marks.push(['em-head-start', programme, `programme ${tc.programmeStart ?? ''}`]);
  const bottom = top + channels * rowPx;
  marks.forEach(([cls, at, text], i) => {
    parts.push(`<line class="${cls}" x1="${num(x(at))}" x2="${num(x(at))}" y1="${top - 4}" y2="${bottom + 4}"/>`);
    // A label centred on a mark near either edge would be cut off: it hangs inward there.
    const anchor = x(at) < left + 80 ? 'start' : x(at) > widthPx - right - 80 ? 'end' : 'middle';
    parts.push(
      `<text class="em-head-mark" x="${num(x(at))}" y="${bottom + 16 + 12 * (i % 2)}" text-anchor="${anchor}">${esc(text.trim())}</text>`,
    );
  });
  parts.push(
    `<text class="em-head-mark" x="${left}" y="${top - 8}">${esc(report.timecode?.originTimecode ?? '')}</text>`,
  );
  const facts = headFacts(report).join('. ');
  return `<svg xmlns="http://www.w3.org/2000/svg" class="em-head-strip" viewBox="0 0 ${widthPx} ${height}" width="100%" role="img" aria-label="${esc(facts)}">${parts.join('')}</svg>`;
}
