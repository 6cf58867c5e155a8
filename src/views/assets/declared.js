// Report page: the loudness the file's metadata declares (bext v2, iXML) beside our readings.
// declaredRows is pure (no DOM) so the tests read the same text the browser shows.
import { el, text } from './common.js';

const TITLES = {
  integratedLufs: 'Integrated loudness',
  loudnessRangeLu: 'Loudness range',
  maxTruePeakDbtp: 'Max true peak',
  maxMomentaryLufs: 'Max momentary',
  maxShortTermLufs: 'Max short-term',
};
const SOURCES = { bext: 'BWF bext', ixml: 'iXML' };

function signedText(value, unit) {
  if (value === null || value === undefined || Number.isNaN(value)) return '–';
  const shown = text(value, 1, unit);
  return value > 0 && shown !== text(0, 1, unit) ? `+${shown}` : shown.replace(/^-(0\.0 )/, '$1');
}

/** One row per declared figure: source, quantity, declared (as stored, 2 decimals), measured, difference. */
export function declaredRows(report) {
  return (report.declaredLoudness ?? []).flatMap((declaration) =>
    declaration.rows.map((row) => ({
      source: SOURCES[declaration.source] ?? declaration.source,
      quantity: TITLES[row.field] ?? row.field,
      declared: text(row.declared, 2, row.unit),
      measured: text(row.measured, 1, row.unit),
      difference: signedText(row.measuredMinusDeclared, row.unit === 'dBTP' ? 'dB' : 'LU'),
    })),
  );
}

/** The flags that say a declared figure differs, as "#n" numbers. */
export function declaredFlagNumbers(report) {
  return (report.flags ?? []).filter((f) => f.kind === 'declared_loudness_mismatch').map((f) => `#${f.number}`);
}

export function renderDeclaredLoudness(report) {
  const section = document.getElementById('em-declared');
  const rows = declaredRows(report);
  if (rows.length === 0) {
    section.hidden = true;
    return;
  }
  const flagged = declaredFlagNumbers(report);
  document.getElementById('em-declared-note').textContent =
    flagged.length === 0
      ? 'Every declared figure is within tolerance of the reading.'
      : `${flagged.length} declared figure${flagged.length === 1 ? '' : 's'} differ${flagged.length === 1 ? 's' : ''} from the reading: see flag${flagged.length === 1 ? '' : 's'} ${flagged.join(', ')}.`;
  document
    .getElementById('em-declared-body')
    .replaceChildren(
      ...rows.map((row) =>
        el(
          'tr',
          {},
          el('td', { 'data-label': 'Source' }, row.source),
          el('td', { 'data-label': 'Quantity' }, row.quantity),
          el('td', { class: 'em-num', 'data-label': 'Declared' }, row.declared),
          el('td', { class: 'em-num', 'data-label': 'Measured' }, row.measured),
          el('td', { class: 'em-num', 'data-label': 'Measured − declared' }, row.difference),
        ),
      ),
    );
  section.hidden = false;
}
