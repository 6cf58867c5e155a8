// Dashboard selection: a checkbox per row; two selected rows open the compare page (the older
// submission as the first delivery), and any selected rows (up to 100) export as one JUnit XML
// file. The selection survives the list's refreshes and paging, and a row's sign-off shows as a
// small marker beside its verdict.
import { el } from './common.js';
import { saveDownload } from './download.js';
import { dateTimeText } from './format.js';

export const MAX_JUNIT_JOBS = 100;
const inPage = typeof document !== 'undefined';
// Job id -> { createdAt, state }: the submit time orders two for the compare page; the state
// (kept current by each refresh) says whether they can be compared yet.
const selected = new Map();

/** The compare page for two selected jobs, the older submission first; null unless exactly two. */
export function comparePathOf(chosen) {
  if (chosen.length !== 2) return null;
  const [a, b] = [...chosen].sort(
    (x, y) => Date.parse(x.createdAt) - Date.parse(y.createdAt) || (x.id < y.id ? -1 : 1),
  );
  return `/jobs/${encodeURIComponent(a.id)}/compare/${encodeURIComponent(b.id)}`;
}

/** The JUnit export's path for the selected ids (the API takes at most 100). */
export function junitPathOf(ids) {
  return `/v1/jobs.junit.xml?${new URLSearchParams({ ids: ids.slice(0, MAX_JUNIT_JOBS).join(',') })}`;
}

/** The sign-off marker's words: "accepted" / "rejected", and who and when for its title. */
export function signOffMarker(signOff) {
  const word = signOff.decision === 'accept' ? 'accepted' : 'rejected';
  const who = `${word === 'accepted' ? 'Accepted' : 'Rejected'} the ${signOff.verdict} verdict, by key ${signOff.by.keyId} (${signOff.by.tenant}) on ${dateTimeText(signOff.at)}`;
  return { word, who };
}

function status(words) {
  document.getElementById('em-select-status').textContent = words;
}

function renderBar() {
  const count = selected.size;
  const unfinished = [...selected.values()].filter((job) => job.state !== 'completed').length;
  document.getElementById('em-select-compare').disabled = count !== 2 || unfinished > 0;
  document.getElementById('em-select-count').textContent =
    `${count} selected${count === 2 && unfinished > 0 ? ' (only completed jobs can be compared)' : ''}${count > MAX_JUNIT_JOBS ? ` (JUnit takes at most ${MAX_JUNIT_JOBS})` : ''}`;
  document.getElementById('em-select-junit').disabled = count === 0 || count > MAX_JUNIT_JOBS;
  document.getElementById('em-select-clear').disabled = count === 0;
}

/** The row's first cell: its checkbox, checked when the job is selected. */
export function selectCell(job, fileName) {
  const box = el('input', {
    type: 'checkbox',
    'data-select': job.id,
    'aria-label': `Select ${fileName}`,
    checked: selected.has(job.id),
  });
  if (selected.has(job.id)) {
    selected.set(job.id, { createdAt: job.createdAt, state: job.state });
    renderBar();
  }
  box.addEventListener('change', () => {
    if (box.checked) selected.set(job.id, { createdAt: job.createdAt, state: job.state });
    else selected.delete(job.id);
    status('');
    renderBar();
  });
  return el('td', { class: 'em-select-cell' }, box);
}

/** A small accepted/rejected marker beside the verdict, with who and when; nothing without a sign-off. */
export function signOffBadge(signOff) {
  if (!signOff) return null;
  const { word, who } = signOffMarker(signOff);
  return el(
    'span',
    { class: `em-signoff-mark em-signoff-${signOff.decision}`, title: who, 'data-signoff': signOff.decision },
    word,
    el('span', { class: 'em-visually-hidden' }, `: ${who}`),
  );
}

export function setupSelection() {
  if (!inPage) return;
  document.getElementById('em-select-compare').addEventListener('click', () => {
    const path = comparePathOf([...selected].map(([id, job]) => ({ id, createdAt: job.createdAt })));
    if (path) window.location.assign(path);
  });
  document.getElementById('em-select-clear').addEventListener('click', () => {
    selected.clear();
    for (const box of document.querySelectorAll('input[data-select]')) box.checked = false;
    status('');
    renderBar();
  });
  const junit = document.getElementById('em-select-junit');
  junit.addEventListener('click', async () => {
    junit.disabled = true;
    try {
      const saved = await saveDownload(junitPathOf([...selected.keys()]), 'earmark.junit.xml', status);
      status(`Saved ${saved.fileName} (${selected.size} jobs).`);
    } catch (error) {
      status(`Not exported: ${error.message}`);
    } finally {
      renderBar();
    }
  });
  renderBar();
}
