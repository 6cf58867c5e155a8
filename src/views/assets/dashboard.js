// Dashboard: queue counters and recent jobs, refreshed every 2 s without reloading the page.
import { api, apiKey, el, setupKeyForm, text, verdictBadge } from './common.js';
import { dateTimeText, stateCounts } from './format.js';

const REFRESH_MS = 2000;
const LIST_LIMIT = 50;
const counters = ['waiting', 'active', 'delayed', 'completed', 'failed', 'workers', 'finishedLastMinute'];
const counterLabels = {
  waiting: 'Waiting',
  active: 'Active',
  delayed: 'Retrying',
  completed: 'Completed',
  failed: 'Failed',
  workers: 'Workers',
  finishedLastMinute: 'Done in last minute',
};
const listCounters = ['shown', 'queued', 'active', 'completed', 'failed'];
const listCounterLabels = {
  shown: 'Rows shown',
  queued: 'Queued',
  active: 'Active',
  completed: 'Completed',
  failed: 'Failed',
};
let timer = null;

function filters() {
  const params = new URLSearchParams({ limit: String(LIST_LIMIT) });
  for (const name of ['state', 'verdict', 'profile']) {
    const value = document.getElementById(`em-filter-${name}`).value;
    if (value) params.set(name, value);
  }
  return params;
}

function counterBoxes(names, labels, values, attribute) {
  return names.map((name) =>
    el(
      'div',
      { class: 'em-counter', [attribute]: name },
      el('b', {}, String(values[name] ?? 0)),
      el('small', {}, labels[name]),
    ),
  );
}

function renderCounters(status) {
  document
    .getElementById('em-counters')
    .replaceChildren(...counterBoxes(counters, counterLabels, status, 'data-counter'));
}

// Counted from the very rows in the table, so they always agree with it.
function renderListCounters(list) {
  document
    .getElementById('em-list-counters')
    .replaceChildren(...counterBoxes(listCounters, listCounterLabels, stateCounts(list.items), 'data-list-counter'));
  document.getElementById('em-list-more').textContent = list.nextCursor
    ? `Only the newest ${LIST_LIMIT} matching jobs are listed and counted here; older ones exist.`
    : '';
}

function renderJobs(list) {
  const body = document.getElementById('em-jobs-body');
  if (list.items.length === 0) {
    body.replaceChildren(
      el('tr', {}, el('td', { colspan: '9', class: 'em-status' }, 'No jobs match these filters yet.')),
    );
    return;
  }
  body.replaceChildren(
    ...list.items.map((job) => {
      const name = job.source.kind === 'upload' ? job.source.fileName : job.source.url;
      const state = job.state === 'active' ? `active ${job.progressPercent}%` : job.state;
      // The headline (or a failure's message) sits under the file name, so a damaged file or a
      // failed job reads as such without opening the report.
      const line = job.state === 'completed' ? job.headline : job.state === 'failed' ? job.error?.message : null;
      const tone = job.state === 'failed' ? 'fail' : (job.verdict ?? 'none');
      return el(
        'tr',
        { 'data-job-id': job.id, 'data-state': job.state, 'data-verdict': job.verdict ?? null },
        el(
          'td',
          {},
          el('a', { href: `/jobs/${encodeURIComponent(job.id)}` }, name),
          line ? el('div', { class: `em-row-headline em-row-headline-${tone}` }, line) : null,
        ),
        el('td', { class: 'em-hide-narrow', 'data-column': 'external-id' }, job.externalId ?? '–'),
        el('td', {}, `${job.profile.id} v${job.profile.version}`),
        el('td', {}, state, job.error ? el('div', { class: 'em-status' }, job.error.code) : null),
        el('td', {}, job.state === 'completed' ? verdictBadge(job.verdict) : '–'),
        el('td', { class: 'em-hide-narrow' }, text(job.summary?.integratedLufs, 1, 'LUFS')),
        el('td', { class: 'em-hide-narrow' }, text(job.summary?.truePeakDbtp, 1, 'dBTP')),
        el('td', { class: 'em-hide-narrow', 'data-column': 'submitted' }, dateTimeText(job.createdAt)),
        el('td', { 'data-column': 'finished' }, dateTimeText(job.finishedAt)),
      );
    }),
  );
}

async function refresh() {
  const status = document.getElementById('em-live-status');
  try {
    const [queue, jobs] = await Promise.all([
      api('/v1/queue').then((r) => r.json()),
      api(`/v1/jobs?${filters()}`).then((r) => r.json()),
    ]);
    renderCounters(queue);
    renderJobs(jobs);
    renderListCounters(jobs);
    status.textContent = `Updated ${dateTimeText(new Date().toISOString())}`;
  } catch (error) {
    status.textContent = `Cannot load: ${error.message}. Enter an API key with read scope.`;
  }
}

// The profile list needs a key, so it is fetched when one is set; the chosen profile survives a reload.
async function loadProfiles() {
  const select = document.getElementById('em-filter-profile');
  if (!apiKey()) return;
  try {
    const list = await api('/v1/profiles').then((r) => r.json());
    const chosen = select.value;
    const options = list.items.map(({ profile }) =>
      el('option', { value: profile.id }, profile.name ? `${profile.id} – ${profile.name}` : profile.id),
    );
    select.replaceChildren(el('option', { value: '' }, 'any'), ...options);
    if (list.items.some(({ profile }) => profile.id === chosen)) select.value = chosen;
  } catch {
    /* the status line already says the key cannot read */
  }
}

function schedule() {
  clearInterval(timer);
  refresh();
  timer = setInterval(refresh, REFRESH_MS);
}

setupKeyForm(() => {
  loadProfiles();
  schedule();
});
for (const name of ['state', 'verdict', 'profile'])
  document.getElementById(`em-filter-${name}`).addEventListener('change', refresh);
loadProfiles();
schedule();
