// The report page's per-channel card (src/views/channels-section.ts): each channel's peaks, RMS,
// loudness, DC offset, dropouts and clipping from the report's channel summaries, with units on
// every value. A channel of digital silence has null levels (JSON has no -Infinity): it reads
// "digital silence", never a number or a dash.
import { el } from './common.js';

/** One decimal, "-0.0" read as "0.0" (as the flag list does). */
const level = (value, unit) => `${value.toFixed(1).replace(/^-(0\.0)$/, '$1')} ${unit}`;

/** A level: its value, "digital silence" for a silent channel, "–" when the report has none. */
function levelText(value, unit, silent) {
  if (value === null) return silent ? 'digital silence' : '–';
  if (value === undefined || !Number.isFinite(value)) return '–';
  return level(value, unit);
}

const plural = (n, one, many) => `${n} ${n === 1 ? one : many}`;

/** The columns of the table, each shown only when some channel has it ("where present"). */
const COLUMNS = [
  { label: 'Sample peak', value: (c, s) => levelText(c.samplePeakDbfs, 'dBFS', s) },
  {
    label: 'True peak',
    value: (c, s) => levelText(c.truePeakDbtp, 'dBTP', s),
    present: (c) => c.truePeakDbtp !== undefined,
  },
  {
    label: 'Reconstructed peak',
    value: (c, s) => levelText(c.reconstructedPeakDbtp, 'dBTP', s),
    present: (c) => c.reconstructedPeakDbtp !== undefined,
  },
  { label: 'RMS', value: (c, s) => levelText(c.rmsDbfs, 'dBFS', s) },
  {
    label: 'Loudness',
    value: (_c, s, lufs) => (lufs === null && !s ? 'below the gate' : levelText(lufs, 'LUFS', s)),
    present: (_c, lufs) => lufs !== undefined,
  },
  {
    label: 'DC offset',
    value: (c, s) => {
      if (c.dcOffsetDbfs === null) return s ? 'digital silence' : 'none';
      const percent = `${(c.dcOffset * 100).toFixed(2).replace(/^-(0\.00)$/, '$1')} %`;
      return `${level(c.dcOffsetDbfs, 'dBFS')} (${percent} of full scale)`;
    },
  },
  {
    label: 'Dropouts',
    value: (c) =>
      c.dropouts > 0 ? `${plural(c.dropouts, 'dropout', 'dropouts')}, ${c.droppedSeconds.toFixed(3)} s` : 'none',
  },
  {
    label: 'Clipping',
    value: (c) =>
      c.clippingRuns > 0
        ? `${plural(c.clippingRuns, 'run', 'runs')}, ${plural(c.clippedSamples, 'sample', 'samples')}`
        : 'none',
  },
];

/** { columns, rows }: the column labels after "Channel", and per channel its name, silence and values. */
export function channelTable(report) {
  const channels = report.channels ?? [];
  const loudness = report.downmix?.channelIntegratedLufs ?? null;
  const lufsOf = (i) => (loudness ? (loudness[i] ?? null) : undefined);
  const columns = COLUMNS.filter((col) => !col.present || channels.some((c, i) => col.present(c, lufsOf(i))));
  return {
    columns: columns.map((col) => col.label),
    rows: channels.map((c, i) => {
      // A sample peak of null: not one sample off zero in the whole channel.
      const silent = c.samplePeakDbfs === null;
      return {
        name: `${c.index + 1} ${c.label}`,
        silent,
        values: columns.map((col) => col.value(c, silent, lufsOf(i))),
      };
    }),
  };
}

/** Dropouts in all channels at once are counted once, not per channel: said under the table. */
export function channelNote(report) {
  const together = report.summary?.allChannelDropouts ?? 0;
  return together > 0
    ? `${plural(together, 'dropout', 'dropouts')} in all channels at once (counted once, not in the rows above).`
    : '';
}

export function renderChannels(report) {
  const section = document.getElementById('em-channels');
  const { columns, rows } = channelTable(report);
  section.hidden = rows.length === 0;
  if (section.hidden) return;
  document
    .getElementById('em-channels-head')
    .replaceChildren(
      el('tr', {}, el('th', { scope: 'col' }, 'Channel'), ...columns.map((c) => el('th', { scope: 'col' }, c))),
    );
  document
    .getElementById('em-channels-body')
    .replaceChildren(
      ...rows.map((row) =>
        el(
          'tr',
          { 'data-channel': row.name, class: row.silent ? 'em-channel-silent' : null },
          el(
            'th',
            { scope: 'row', 'data-label': 'Channel' },
            row.name,
            row.silent ? el('small', {}, ' digital silence') : null,
          ),
          ...row.values.map((value, k) => el('td', { 'data-label': columns[k] }, value)),
        ),
      ),
    );
  document.getElementById('em-channels-note').textContent = channelNote(report);
}
