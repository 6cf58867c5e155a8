// Re-delivery page: what changed from one job (the first delivery) to another (the
// re-delivery), from GET /v1/jobs/:id/compare/:otherId. Every figure carries its unit.
import { api, el, setupKeyForm, verdictBadge } from './common.js';

const jobId = document.body.dataset.jobId;
const otherJobId = document.body.dataset.otherJobId;

/** Fixed decimals, with "-0.0" read as "0.0". */
function fixed(value, decimals) {
  return Number(value)
    .toFixed(decimals)
    .replace(/^-(0\.?0*)$/, '$1');
}

const valueText = (value, unit, decimals) => (value === null ? 'not measured' : `${fixed(value, decimals)} ${unit}`);

function deltaText(r) {
  if (r.delta === null) return r.changed ? 'changed' : 'same';
  if (!r.changed) return 'same';
  return `${r.delta > 0 ? '+' : ''}${fixed(r.delta, r.decimals)} ${r.deltaUnit}`;
}

const CHANGE_WORDS = {
  fixed: 'fixed',
  broken: 'broken',
  still_broken: 'still broken',
  still_met: 'met in both',
  added: 'new rule',
  removed: 'rule gone',
};

function checkSideText(side) {
  if (!side) return 'not in this profile';
  const m = side.measured;
  const shown =
    m === null
      ? 'not measured'
      : Array.isArray(m)
        ? m.join(' ')
        : typeof m === 'number'
          ? Number.isInteger(m)
            ? String(m)
            : fixed(m, 1)
          : m;
  const outcome = side.outcome.replace('_', ' ');
  // Integrity and a few other rules measure nothing to show: their outcome alone.
  return shown === '' ? outcome : `${shown}${m !== null && side.unit ? ` ${side.unit}` : ''} (${outcome})`;
}

function flagLine(flag) {
  const worst =
    flag.worstValue !== null && flag.unit
      ? `worst ${fixed(flag.worstValue, flag.unit === 'correlation' ? 2 : 1)} ${flag.unit}`
      : null;
  const channel = flag.channelName === 'all' ? 'all channels' : `ch ${flag.channelName}`;
  return [
    `${flag.startTimecode} – ${flag.endTimecode}`,
    flag.otherChannelName ? `${channel} with ${flag.otherChannelName}` : channel,
    flag.count > 1 ? `× ${flag.count}` : null,
    worst,
  ]
    .filter(Boolean)
    .join(', ');
}

function flagItem(flag, note) {
  return el(
    'li',
    { class: `em-cmp-flag em-cmp-sev-${flag.severity}` },
    el('strong', {}, `#${flag.number} ${flag.title}`),
    ` (${flag.severity}) `,
    el('span', { class: 'em-status' }, flagLine(flag)),
    note ? el('span', { class: 'em-status' }, ` ${note}`) : null,
  );
}

function flagGroup(name, title, items, render) {
  return el(
    'section',
    { class: `em-cmp-flag-group em-cmp-${name}`, 'data-group': name },
    el('h3', {}, `${title} (${items.length})`),
    items.length === 0
      ? el('p', { class: 'em-status' }, 'None.')
      : el('ul', { class: 'em-cmp-flags' }, items.map(render)),
  );
}

function sideCard(label, side, id) {
  return el(
    'div',
    { class: 'em-cmp-side', 'data-side': label.toLowerCase() },
    el('h3', {}, label, ' ', verdictBadge(side.verdict)),
    el('p', { class: 'em-cmp-file' }, el('a', { href: `/jobs/${encodeURIComponent(id)}` }, side.fileName ?? id)),
    el('p', { class: 'em-status' }, `Profile ${side.profile.id} ${side.profile.version}`),
    el('p', {}, side.headline),
  );
}

function render(c) {
  const headline = document.getElementById('em-cmp-headline');
  headline.className = `em-headline em-headline-${c.verdict.after}`;
  headline.replaceChildren(
    verdictBadge(c.verdict.before),
    ' → ',
    verdictBadge(c.verdict.after),
    ` ${{ better: 'Better', worse: 'Worse', same: 'Same verdict' }[c.verdict.change]}: ${c.flags.resolved.length} flags resolved, ${c.flags.new.length} new, ${c.flags.persisting.length} persisting`,
  );
  headline.dataset.change = c.verdict.change;
  headline.hidden = false;

  const warnings = document.getElementById('em-cmp-warnings');
  warnings.replaceChildren(...c.warnings.map((w) => el('li', { 'data-code': w.code }, `Warning: ${w.message}`)));
  warnings.hidden = c.warnings.length === 0;

  document
    .getElementById('em-cmp-sides')
    .replaceChildren(sideCard('Before', c.before, jobId), sideCard('After', c.after, otherJobId));

  const rows = [
    ...c.readings.map((r) =>
      el(
        'tr',
        { 'data-key': r.key, class: r.changed ? 'em-cmp-changed' : null },
        el('th', { scope: 'row' }, r.label),
        el('td', { class: 'em-num', 'data-label': 'Before' }, valueText(r.before, r.unit, r.decimals)),
        el('td', { class: 'em-num', 'data-label': 'After' }, valueText(r.after, r.unit, r.decimals)),
        el('td', { class: 'em-num em-cmp-delta', 'data-label': 'Change' }, deltaText(r)),
      ),
    ),
    ...c.format
      .filter((f) => f.changed)
      .map((f) =>
        el(
          'tr',
          { 'data-key': f.key, class: 'em-cmp-changed' },
          el('th', { scope: 'row' }, f.label),
          el('td', { 'data-label': 'Before' }, f.before ?? 'none'),
          el('td', { 'data-label': 'After' }, f.after ?? 'none'),
          el('td', { 'data-label': 'Change' }, 'changed'),
        ),
      ),
  ];
  document.getElementById('em-cmp-readings').replaceChildren(...rows);

  document
    .getElementById('em-cmp-checks')
    .replaceChildren(
      ...c.checks.map((k) =>
        el(
          'tr',
          { 'data-rule': k.ruleId, 'data-change': k.change, class: `em-cmp-check-${k.change}` },
          el('th', { scope: 'row' }, k.ruleId),
          el('td', {}, checkSideText(k.before)),
          el('td', {}, checkSideText(k.after)),
          el('td', {}, CHANGE_WORDS[k.change] ?? k.change),
        ),
      ),
    );

  const f = c.flags;
  document.getElementById('em-cmp-flag-counts').textContent =
    `${f.resolved.length} resolved · ${f.new.length} new · ${f.persisting.length} persisting`;
  document.getElementById('em-cmp-flag-rule').textContent =
    `A flag persists when the re-delivery has one of the same kind on the same channel within ${fixed(f.toleranceSeconds, 1)} s of it. The two files are taken to start at the same point of the programme.`;
  document.getElementById('em-cmp-flags').replaceChildren(
    flagGroup('resolved', 'Resolved', f.resolved, (x) => flagItem(x, null)),
    flagGroup('new', 'New', f.new, (x) => flagItem(x, null)),
    flagGroup('persisting', 'Persisting', f.persisting, (p) =>
      flagItem(p.after, `(was #${p.before.number} at ${p.before.startTimecode}, ${p.before.severity})`),
    ),
  );
  document.getElementById('em-cmp-body').hidden = false;
}

async function load() {
  const status = document.getElementById('em-load-status');
  status.textContent = 'Loading…';
  try {
    const response = await api(`/v1/jobs/${encodeURIComponent(jobId)}/compare/${encodeURIComponent(otherJobId)}`);
    render(await response.json());
    status.textContent = '';
    status.hidden = true;
  } catch (error) {
    status.hidden = false;
    status.textContent = `Cannot compare: ${error.message}`;
  }
}

setupKeyForm(load);
load();
