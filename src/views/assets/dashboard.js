// Dashboard: queue counters and recent jobs, refreshed every 2 s without reloading the page.
import { api, el, setupKeyForm, text, verdictBadge } from './common.js';

const REFRESH_MS = 2000;
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
let timer = null;

function filters() {
  const params = new URLSearchParams({ limit: '50' });
  for (const name of ['state', 'verdict', 'profile']) {
    const value = document.getElementById(`em-filter-${name}`).value;
    if (value) params.set(name, value);
  }
  return params;
}

function renderCounters(status) {
  const box = document.getElementById('em-counters');
  box.replaceChildren(
    ...counters.map((name) =>
      el(
        'div',
        { class: 'em-counter', 'data-counter': name },
        el('b', {}, String(status[name] ?? 0)),
        el('small', {}, counterLabels[name]),
      ),
    ),
  );
}

function when(iso) {
  return iso ? new Date(iso).toLocaleTimeString() : '–';
}

function renderJobs(list) {
  const body = document.getElementById('em-jobs-body');
  if (list.items.length === 0) {
    body.replaceChildren(
      el('tr', {}, el('td', { colspan: '8', class: 'em-status' }, 'No jobs match these filters yet.')),
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
        el('td', {}, `${job.profile.id} v${job.profile.version}`),
        el('td', {}, state, job.error ? el('div', { class: 'em-status' }, job.error.code) : null),
        el('td', {}, job.state === 'completed' ? verdictBadge(job.verdict) : '–'),
        el('td', { class: 'em-hide-narrow' }, text(job.summary?.integratedLufs, 1, 'LUFS')),
        el('td', { class: 'em-hide-narrow' }, text(job.summary?.truePeakDbtp, 1, 'dBTP')),
        el('td', { class: 'em-hide-narrow' }, when(job.createdAt)),
        el('td', {}, when(job.finishedAt)),
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
    status.textContent = `Updated ${new Date().toLocaleTimeString()}`;
  } catch (error) {
    status.textContent = `Cannot load: ${error.message}. Enter an API key with read scope.`;
  }
}

function schedule() {
  clearInterval(timer);
  refresh();
  timer = setInterval(refresh, REFRESH_MS);
}

setupKeyForm(schedule);
for (const name of ['state', 'verdict', 'profile'])
  document.getElementById(`em-filter-${name}`).addEventListener('change', refresh);
api('/v1/profiles')
  .then((r) => r.json())
  .then((list) => {
    const select = document.getElementById('em-filter-profile');
    for (const profile of list.items ?? []) select.append(el('option', { value: profile.id }, profile.id));
  })
  .catch(() => {
    /* filled once a key is entered */
  });
schedule();
