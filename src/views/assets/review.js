// Report page, review panel: the operator signs off a warn or fail verdict (accept or reject, with
// a note) and sees the decision on record with who and when; any finished job can be re-run
// against another profile or profile version, with a link to the new job. Hooked into the page
// by its own container (#em-review) and script tag, so report.js knows nothing of it.
import { api, apiKey, el } from './common.js';
import { dateTimeText } from './format.js';

// Pure helpers first: the tests import this file without a page.
const inPage = typeof document !== 'undefined';
const jobId = inPage ? document.body.dataset.jobId : '';
const panel = inPage ? document.getElementById('em-review') : null;
let pending = null;

/** "Accepted … by key 1a2b3c4d5e6f (alpha) on 2026-12-04 22:10:03" (local time; the ISO time in the title). */
export function signOffText(signOff) {
  const what = signOff.decision === 'accept' ? 'Accepted' : 'Rejected';
  const who = signOff.by.operator ? `${signOff.by.operator}, with key` : 'key';
  return `${what} the ${signOff.verdict} verdict, by ${who} ${signOff.by.keyId} (${signOff.by.tenant}) on ${dateTimeText(signOff.at)}`;
}

/** The version choices for a profile entry: the current one first, then every stored older one. */
export function versionOptions(entry) {
  const options = [{ value: '', label: `current (${entry.profile.version})` }];
  if (entry.builtin) return options;
  for (let n = entry.versions - 1; n >= 1; n -= 1) options.push({ value: `${n}.0.0`, label: `${n}.0.0` });
  return options;
}

const jobLink = (id) => el('a', { href: `/jobs/${encodeURIComponent(id)}` }, id);

function lineage(job) {
  const parts = [];
  if (job.rerunOf) parts.push(el('p', { 'data-review': 'rerun-of' }, 'Re-run of ', jobLink(job.rerunOf), '.'));
  if (job.reruns?.length)
    parts.push(
      el(
        'p',
        { 'data-review': 'reruns' },
        'Re-runs of this job: ',
        ...job.reruns.flatMap((id, i) => [i > 0 ? ', ' : '', jobLink(id)]),
        '.',
      ),
    );
  return parts;
}

function recorded(signOff) {
  if (!signOff) return el('p', { class: 'em-status', 'data-review': 'current' }, 'Not signed off yet.');
  return el(
    'div',
    { class: `em-review-record em-review-${signOff.decision}`, 'data-review': 'current' },
    el('p', { class: 'em-review-who', title: signOff.at }, signOffText(signOff)),
    signOff.note ? el('blockquote', { class: 'em-review-note' }, signOff.note) : null,
    el('p', { class: 'em-status' }, 'A new sign-off replaces this one; the history keeps both.'),
  );
}

function historyList(history) {
  if (history.length < 2) return null;
  return el(
    'details',
    { class: 'em-review-history', 'data-review': 'history' },
    el('summary', {}, `History (${history.length})`),
    el(
      'ol',
      {},
      ...history.map((s) =>
        el('li', {}, signOffText(s), s.note ? el('span', { class: 'em-status' }, ` – ${s.note}`) : null),
      ),
    ),
  );
}

function signOffForm(job, history) {
  const status = el('p', { class: 'em-status', role: 'status', 'data-review': 'signoff-status' });
  const note = el('textarea', { id: 'em-review-note', rows: '3', maxlength: '2000' });
  // The name is remembered for the tab, like the key: one operator signs many reports.
  const operator = el('input', {
    id: 'em-review-operator',
    type: 'text',
    maxlength: '100',
    autocomplete: 'name',
    value: sessionStorage.getItem('earmark.operator') ?? '',
  });
  const choice = (value, label) =>
    el(
      'label',
      { class: 'em-review-choice' },
      el('input', { type: 'radio', name: 'em-review-decision', value, checked: value === 'reject' }),
      ` ${label}`,
    );
  const form = el(
    'form',
    { class: 'em-review-form', 'aria-label': 'Sign off the verdict' },
    el('fieldset', {}, el('legend', {}, 'Decision'), choice('accept', 'Accept'), choice('reject', 'Reject')),
    el(
      'label',
      { for: 'em-review-note' },
      'Note',
      job.verdict === 'fail' ? el('small', {}, ' (required to accept a fail)') : null,
    ),
    note,
    el('label', { for: 'em-review-operator' }, 'Your name', el('small', {}, ' (recorded beside the key)')),
    operator,
    el('button', { type: 'submit' }, 'Record sign-off'),
    status,
  );
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    const decision = form.querySelector('input[name="em-review-decision"]:checked')?.value ?? 'reject';
    status.textContent = 'Recording…';
    sessionStorage.setItem('earmark.operator', operator.value.trim());
    try {
      await api(`/v1/jobs/${encodeURIComponent(jobId)}/signoffs`, {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify({
          decision,
          ...(note.value.trim() ? { note: note.value } : {}),
          ...(operator.value.trim() ? { operator: operator.value.trim() } : {}),
        }),
      });
      await load();
    } catch (error) {
      status.textContent = `Not recorded: ${error.message}`;
    }
  });
  return el(
    'div',
    { class: 'em-review-block', 'data-review': 'signoff' },
    el('h3', {}, 'Sign-off'),
    recorded(job.signOff),
    historyList(history),
    form,
  );
}

async function rerunForm() {
  const { items } = await api('/v1/profiles').then((r) => r.json());
  const profile = el(
    'select',
    { id: 'em-review-profile' },
    ...items.map((entry) => el('option', { value: entry.profile.id }, `${entry.profile.id} – ${entry.profile.name}`)),
  );
  const version = el('select', { id: 'em-review-version' });
  const fillVersions = () => {
    const entry = items.find((e) => e.profile.id === profile.value);
    version.replaceChildren(
      ...(entry ? versionOptions(entry) : []).map((o) => el('option', { value: o.value }, o.label)),
    );
  };
  profile.addEventListener('change', fillVersions);
  fillVersions();
  const status = el('p', { class: 'em-status', role: 'status', 'data-review': 'rerun-status' });
  const form = el(
    'form',
    { class: 'em-review-form em-review-rerun', 'aria-label': 'Re-run against another profile' },
    el('label', { for: 'em-review-profile' }, 'Profile'),
    profile,
    el('label', { for: 'em-review-version' }, 'Version'),
    version,
    el('button', { type: 'submit' }, 'Re-run'),
    status,
  );
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    status.textContent = 'Queuing…';
    const body = { profile: profile.value, ...(version.value ? { profileVersion: version.value } : {}) };
    try {
      const made = await api(`/v1/jobs/${encodeURIComponent(jobId)}/reruns`, {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify(body),
      }).then((r) => r.json());
      status.replaceChildren(
        'Queued as ',
        el('a', { href: `/jobs/${encodeURIComponent(made.id)}`, 'data-review': 'new-job' }, made.id),
        '.',
      );
    } catch (error) {
      status.textContent = `Not queued: ${error.message}`;
    }
  });
  return el(
    'div',
    { class: 'em-review-block', 'data-review': 'rerun' },
    el('h3', {}, 'Re-run'),
    el('p', { class: 'em-status' }, 'Checks the stored audio again as a new job; nothing is uploaded.'),
    form,
  );
}

async function load() {
  clearTimeout(pending);
  if (!panel || !apiKey()) return;
  try {
    const job = await api(`/v1/jobs/${encodeURIComponent(jobId)}`).then((r) => r.json());
    if (job.state !== 'completed' && job.state !== 'failed') {
      pending = setTimeout(load, 2000);
      return;
    }
    const reviewable = job.state === 'completed' && (job.verdict === 'warn' || job.verdict === 'fail');
    const history = reviewable
      ? (await api(`/v1/jobs/${encodeURIComponent(jobId)}/signoffs`).then((r) => r.json())).history
      : [];
    const blocks = [
      el('h2', { id: 'em-review-title', style: 'margin-top:0' }, 'Review'),
      ...lineage(job),
      reviewable
        ? signOffForm(job, history)
        : el(
            'p',
            { class: 'em-status', 'data-review': 'no-signoff' },
            job.state === 'failed' ? 'A failed job has no verdict to sign off.' : 'A pass needs no sign-off.',
          ),
      await rerunForm(),
    ];
    panel.replaceChildren(...blocks);
    panel.hidden = false;
  } catch (error) {
    panel.replaceChildren(el('p', { class: 'em-status' }, `Review unavailable: ${error.message}`));
    panel.hidden = false;
  }
}

if (inPage) {
  // The page's key form saves the key in its own listener: read it after that has run.
  document.getElementById('em-key-form')?.addEventListener('submit', () => setTimeout(load, 0));
  load();
}
