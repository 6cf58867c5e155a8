// Dashboard: queue counters and a filtered, paged job list, refreshed every 2 s without
// reloading the page; uploads live in dashboard-upload.js.
import { api, apiKey, el, setupKeyForm, text, verdictBadge } from './common.js';
import { fillUploadProfiles, setupUploads } from './dashboard-upload.js';
import { selectCell, setupSelection, signOffBadge } from './dashboard-select.js';
import { dateTimeText, stateCounts } from './format.js';

const REFRESH_MS = 2000;
const SEARCH_PAUSE_MS = 300;
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
// Paging: the cursor of each page shown so far; the last is the current page's (null: the first).
let cursors = [null];
let nextCursor = null;
// Only the newest request's answer is drawn, so a slow answer to old filters never overwrites.
let requestNumber = 0;

const value = (name) => document.getElementById(`em-filter-${name}`).value;

/** The start of a local calendar day (yyyy-mm-dd from a date input) as an instant. */
function localDayStart(day, plusDays = 0) {
  const [year, month, date] = day.split('-').map(Number);
  return new Date(year, month - 1, date + plusDays).toISOString();
}

/** The list's filters as the form holds them, or a reason they cannot be asked. The dates are
 * the operator's own days: from the first day's local midnight to the end of the last. */
function readFilters() {
  const limit = Number(value('limit')) || 50;
  const params = new URLSearchParams({ limit: String(limit) });
  for (const name of ['state', 'verdict', 'profile']) if (value(name)) params.set(name, value(name));
  const q = value('q').trim();
  if (q) params.set('q', q);
  const from = value('from');
  const to = value('to');
  if (from && to && to < from) return { limit, problem: 'The "to" date is before the "from" date: no job can match.' };
  if (from) params.set('submittedFrom', localDayStart(from));
  if (to) params.set('submittedTo', localDayStart(to, 1));
  return { limit, params };
}

// The filters in force, read when one changes (not at each refresh: text still being typed
// into the search must not reach the list before its pause, nor take the list back to page 1).
let applied = readFilters();

/** The current page's query: the filters in force and the page's cursor. */
function listQuery() {
  if (!applied.params) return applied;
  const params = new URLSearchParams(applied.params);
  const cursor = cursors[cursors.length - 1];
  if (cursor) params.set('cursor', cursor);
  return { limit: applied.limit, params };
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
  const limit = applied.limit;
  const page = `Page ${cursors.length}`;
  let more = '';
  if (list.nextCursor && list.items.length < limit)
    more = `${page} has fewer than ${limit} rows: the server looks through a bounded number of jobs per page. Next page searches older jobs.`;
  else if (list.nextCursor)
    more = `${page}: the counters cover these rows only; older matching jobs are on the next pages.`;
  else if (cursors.length > 1) more = `${page}, the last: the counters cover these rows only.`;
  document.getElementById('em-list-more').textContent = more;
}

function renderPager(list) {
  nextCursor = list.nextCursor;
  document.getElementById('em-page-prev').disabled = cursors.length === 1;
  document.getElementById('em-page-next').disabled = !list.nextCursor;
  document.getElementById('em-page-number').textContent = `Page ${cursors.length}`;
}

function renderJobs(list) {
  const body = document.getElementById('em-jobs-body');
  if (list.items.length === 0) {
    body.replaceChildren(
      el('tr', {}, el('td', { colspan: '10', class: 'em-status' }, 'No jobs match these filters yet.')),
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
        selectCell(job, name),
        el(
          'td',
          {},
          el('a', { href: `/jobs/${encodeURIComponent(job.id)}` }, name),
          line ? el('div', { class: `em-row-headline em-row-headline-${tone}` }, line) : null,
        ),
        el('td', { class: 'em-hide-narrow', 'data-column': 'external-id' }, job.externalId ?? '–'),
        el('td', {}, `${job.profile.id} v${job.profile.version}`),
        el('td', {}, state, job.error ? el('div', { class: 'em-status' }, job.error.code) : null),
        el('td', {}, job.state === 'completed' ? [verdictBadge(job.verdict), signOffBadge(job.signOff)] : '–'),
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
  const number = ++requestNumber;
  const query = listQuery();
  try {
    const [queue, jobs] = await Promise.all([
      api('/v1/queue').then((r) => r.json()),
      query.params ? api(`/v1/jobs?${query.params}`).then((r) => r.json()) : { items: [], nextCursor: null },
    ]);
    if (number !== requestNumber) return;
    renderCounters(queue);
    renderJobs(jobs);
    renderListCounters(jobs);
    renderPager(jobs);
    // Which query the rows answer (tests and scripts wait on it instead of on timing).
    document.getElementById('em-jobs-body').setAttribute('data-query', query.params ? String(query.params) : '');
    status.textContent = query.problem ?? `Updated ${dateTimeText(new Date().toISOString())}`;
  } catch (error) {
    if (number !== requestNumber) return;
    status.textContent = `Cannot load: ${error.message}. Enter an API key with read scope.`;
  }
}

/** New filters start again at the first page. */
function filtersChanged() {
  applied = readFilters();
  cursors = [null];
  nextCursor = null;
  refresh();
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
    fillUploadProfiles(list.items);
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
  cursors = [null];
  loadProfiles();
  schedule();
});
for (const name of ['state', 'verdict', 'profile', 'from', 'to', 'limit'])
  document.getElementById(`em-filter-${name}`).addEventListener('change', filtersChanged);
let searchPause = null;
document.getElementById('em-filter-q').addEventListener('input', () => {
  clearTimeout(searchPause);
  searchPause = setTimeout(filtersChanged, SEARCH_PAUSE_MS);
});
document.getElementById('em-page-next').addEventListener('click', () => {
  if (!nextCursor) return;
  cursors.push(nextCursor);
  refresh();
});
document.getElementById('em-page-prev').addEventListener('click', () => {
  if (cursors.length > 1) cursors.pop();
  refresh();
});
setupUploads(() => refresh());
setupSelection();
loadProfiles();
schedule();
