// The report page's flag table (src/views/flags-section.ts): each flag's start and end (timecode
// and seconds), duration, count, worst value, channel, rule and severity. A kind that repeats is
// one group row with its totals; its flags open below it. The wording is pure (tested in Node).
import { el } from './common.js';
import { flagView, unlistedText, worstValueText } from './format.js';

const RANK = { fail: 0, warn: 1, remark: 2 };
/** Kinds whose level is absent only for digital zero (analysis/events.ts: no peakValue for digital silence). */
const DIGITAL_ZERO_KINDS = new Set(['silence', 'silence_gap', 'dropout', 'dead_channel']);

/** Seconds to the millisecond, cut down as the timecode is (a sample at 4.9997 s is in 00:00:04:24, so 4.999 s). */
export const secondsText = (seconds) => `${(Math.floor(seconds * 1000 + 1e-6) / 1000).toFixed(3)} s`;

/** A length: milliseconds under 0.1 s (a 24-sample clip run is 0.5 ms, not "0.000 s"), else seconds. */
export const lengthText = (seconds) =>
  seconds < 0.1 ? `${(seconds * 1000).toFixed(1)} ms` : `${seconds.toFixed(3)} s`;

/** The worst value with its unit; "digital silence" where the kind's level is null for that alone. */
export function worstText(flag) {
  const worst = worstValueText(flag);
  if (worst) return worst;
  return DIGITAL_ZERO_KINDS.has(flag.kind) ? 'digital silence' : '–';
}

export function durationText(flag) {
  return flag.endSeconds > flag.startSeconds ? lengthText(flag.endSeconds - flag.startSeconds) : 'point';
}

/** "2 R", "all", or "2 R with 1 L" for a pair. */
export function channelCellText(flag) {
  return flag.otherChannelName ? `${flag.channelName} with ${flag.otherChannelName}` : flag.channelName;
}

export const ruleText = (flag) => flag.ruleId ?? 'none';

/** The worst of several flags of one kind: the lowest correlation of a phase problem, else the highest level (as flags merge). */
function worstOf(flags) {
  const valued = flags.filter((f) => f.worstValue !== null && Number.isFinite(f.worstValue));
  if (valued.length === 0) return { kind: flags[0].kind, worstValue: null, unit: null };
  // Values in different units (declared loudness: LU and dB) do not compare.
  if (new Set(valued.map((f) => f.unit)).size > 1) return { kind: flags[0].kind, worstValue: null, unit: null };
  const lowest = flags[0].kind === 'phase_problem';
  const worst = valued.reduce((a, b) => ((lowest ? b.worstValue < a.worstValue : b.worstValue > a.worstValue) ? b : a));
  return { kind: worst.kind, worstValue: worst.worstValue, unit: worst.unit };
}

const distinct = (values) => [...new Set(values)];
const listText = (values, most = 4) =>
  values.length <= most ? values.join(', ') : `${values.slice(0, most).join(', ')} and ${values.length - most} more`;

/**
 * The report's flags (viewed) by kind: the strictest group first, then the earliest. Each group has
 * its flags in report order and the totals a group row shows.
 */
export function flagGroups(rawFlags) {
  const byKind = new Map();
  rawFlags.forEach((raw, index) => {
    const flag = flagView(raw, index);
    if (!byKind.has(flag.kind)) byKind.set(flag.kind, { kind: flag.kind, title: flag.title, members: [] });
    byKind.get(flag.kind).members.push({ flag, index });
  });
  const groups = [...byKind.values()].map((group) => {
    const flags = group.members.map((m) => m.flag);
    const first = flags.reduce((a, b) => (b.startSeconds < a.startSeconds ? b : a));
    const last = flags.reduce((a, b) => (b.endSeconds > a.endSeconds ? b : a));
    return {
      ...group,
      severity: flags.reduce((s, f) => (RANK[f.severity] < RANK[s] ? f.severity : s), 'remark'),
      startSeconds: first.startSeconds,
      startTimecode: first.startTimecode,
      endSeconds: last.endSeconds,
      endTimecode: last.endTimecode,
      durationSeconds: flags.reduce((sum, f) => sum + Math.max(0, f.endSeconds - f.startSeconds), 0),
      count: flags.reduce((sum, f) => sum + f.count, 0),
      worst: worstText(worstOf(flags)),
      channels: listText(distinct(flags.map(channelCellText))),
      rules: listText(distinct(flags.map(ruleText))),
    };
  });
  return groups.sort((a, b) => RANK[a.severity] - RANK[b.severity] || a.startSeconds - b.startSeconds);
}

/** One wrapper per cell: on a phone the cell is a two-column grid (its label, then this). */
const cell = (label, ...children) => el('td', { 'data-label': label }, el('span', { class: 'em-cell' }, ...children));
const timeCell = (label, timecode, seconds) =>
  cell(
    label,
    el('span', { class: 'em-tc' }, timecode),
    ' ',
    el('small', { class: 'em-seconds' }, secondsText(seconds)),
  );
const severityBadge = (severity) => el('span', { class: `em-sev em-sev-badge-${severity}` }, severity);

function flagRow(flag, index, actions, member) {
  const messageId = `em-flag-message-${index}`;
  return el(
    'tr',
    {
      id: `em-flag-row-${index}`,
      'data-flag-index': String(index),
      'data-severity': flag.severity,
      'data-kind': flag.kind,
      class: `em-flag-item em-flag-item-${flag.severity}${member ? ' em-flag-member' : ''}`,
      hidden: member,
    },
    cell(
      'Flag',
      el(
        'button',
        {
          type: 'button',
          class: 'em-flag-go',
          onclick: () => actions.show(flag, index),
          'aria-describedby': flag.message ? messageId : null,
        },
        el('span', { class: 'em-flag-number' }, `#${flag.number}`),
        ' ',
        el('span', { class: `em-swatch em-swatch-${flag.kind}`, 'aria-hidden': 'true' }),
        ' ',
        el('span', { class: 'em-flag-title' }, flag.title),
        el('span', { class: 'em-visually-hidden' }, ', show on the plot'),
      ),
      // Print hides every button: the same words, plain.
      el('span', { class: 'em-print-only', 'aria-hidden': 'true' }, `#${flag.number} ${flag.title}`),
      flag.message ? el('small', { class: 'em-flag-message', id: messageId }, flag.message) : null,
    ),
    cell('Severity', severityBadge(flag.severity)),
    timeCell('Start', flag.startTimecode, flag.startSeconds),
    timeCell('End', flag.endTimecode, flag.endSeconds),
    cell('Duration', durationText(flag)),
    cell('Count', String(flag.count)),
    cell('Worst', worstText(flag)),
    cell('Channel', channelCellText(flag)),
    cell('Rule', ruleText(flag)),
    cell(
      'Listen',
      el(
        'button',
        {
          type: 'button',
          class: 'em-quiet em-listen',
          onclick: () => actions.listen(flag),
          'aria-label': `Listen to flag #${flag.number}, ${flag.title}, at ${flag.startTimecode}`,
        },
        'Listen',
      ),
    ),
  );
}

function groupRow(group) {
  const ids = group.members.map((m) => `em-flag-row-${m.index}`).join(' ');
  const label = (open) => `${open ? '▾' : '▸'} ${group.title} · ${group.members.length} flags`;
  const toggle = el(
    'button',
    { type: 'button', class: 'em-group-toggle', 'aria-expanded': 'false', 'aria-controls': ids },
    label(false),
  );
  toggle.addEventListener('click', () => {
    const open = toggle.getAttribute('aria-expanded') !== 'true';
    toggle.setAttribute('aria-expanded', String(open));
    toggle.textContent = label(open);
    for (const m of group.members) document.getElementById(`em-flag-row-${m.index}`).hidden = !open;
  });
  return el(
    'tr',
    { class: `em-flag-group em-flag-item-${group.severity}`, 'data-kind': group.kind, 'data-severity': group.severity },
    cell('Flags', toggle, el('span', { class: 'em-print-only', 'aria-hidden': 'true' }, label(true).slice(2))),
    cell('Severity', severityBadge(group.severity), ' ', el('small', {}, 'strictest')),
    timeCell('First start', group.startTimecode, group.startSeconds),
    timeCell('Last end', group.endTimecode, group.endSeconds),
    cell('Duration', `${lengthText(group.durationSeconds)} in all`),
    cell('Count', String(group.count)),
    cell('Worst', group.worst),
    cell('Channel', group.channels),
    cell('Rule', group.rules),
    cell('Listen', el('small', { class: 'em-status' }, 'open to listen')),
  );
}

/** Fills the table: one row per flag of a kind seen once; a group row, then its flags (closed), for a kind that repeats. */
export function renderFlagTable(report, actions) {
  const body = document.getElementById('em-flags-body');
  const groups = flagGroups(report.flags);
  const capped = report.flagsTruncated
    ? `${report.flagsTotal - report.flags.length} more flags not listed (the report keeps ${report.flags.length}, fail flags first).`
    : '';
  // Set before the empty case: a file whose every finding lies past the event cap lists none.
  const unlisted = unlistedText(report);
  document.getElementById('em-flags-truncated').textContent = [capped, unlisted].filter(Boolean).join(' ');
  if (groups.length === 0) {
    const none = unlisted
      ? 'No flags listed: see the detections past the event cap below.'
      : 'No time-located findings.';
    body.replaceChildren(el('tr', {}, el('td', { colspan: '10', class: 'em-status' }, none)));
    return;
  }
  body.replaceChildren(
    ...groups.flatMap((group) =>
      group.members.length === 1
        ? [flagRow(group.members[0].flag, group.members[0].index, actions, false)]
        : [groupRow(group), ...group.members.map((m) => flagRow(m.flag, m.index, actions, true))],
    ),
  );
}
