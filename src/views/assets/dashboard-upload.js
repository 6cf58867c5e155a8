// Dashboard uploads: each chosen or dropped file is POSTed as multipart to /v1/jobs with its own
// progress bar, a few at a time (not all at once, so one slow link is not split many ways and
// the server's upload limit is not hit by a whole batch together). Each row ends with the job's
// link or the problem the API answered, in plain words.
import { apiKey, el } from './common.js';

const AT_ONCE = 3;
const waiting = [];
let running = 0;
let onQueued = () => undefined;

// Decimal units (kB = 1000 bytes), as file managers commonly show them.
const sizeText = (bytes) =>
  bytes >= 1e6 ? `${(bytes / 1e6).toFixed(1)} MB` : `${Math.max(1, Math.round(bytes / 1e3))} kB`;

/** "code: detail (field)" from a problem+json body, or what is known without one. */
function problemText(status, body) {
  let problem = null;
  try {
    problem = JSON.parse(body);
  } catch {
    /* not JSON: a proxy's page, or nothing */
  }
  if (!problem || typeof problem !== 'object') return `The server answered ${status} without an explanation.`;
  const field = problem.field ? ` (field: ${problem.field})` : '';
  return `Refused, ${problem.code ?? status}: ${problem.detail ?? problem.title ?? 'no detail given'}${field}`;
}

function row(file) {
  const progress = el('progress', { max: '100', value: '0', 'aria-label': `Upload of ${file.name}` }, '0 %');
  const percent = el('span', { class: 'em-upload-percent' }, '0 %');
  const outcome = el('div', { class: 'em-upload-outcome', 'aria-live': 'polite' }, 'Waiting for its turn…');
  const item = el(
    'li',
    { class: 'em-upload', 'data-upload-name': file.name, 'data-upload-state': 'waiting' },
    el('span', { class: 'em-upload-name' }, file.name, ' ', el('small', { class: 'em-status' }, sizeText(file.size))),
    progress,
    percent,
    outcome,
  );
  const show = (value) => {
    progress.value = value;
    progress.textContent = `${value} %`;
    percent.textContent = `${value} %`;
  };
  return { item, show, outcome };
}

function upload(task) {
  const { file, profile, externalId, view } = task;
  view.item.setAttribute('data-upload-state', 'uploading');
  view.outcome.textContent = 'Uploading…';
  const form = new FormData();
  form.append('profile', profile);
  if (externalId) form.append('externalId', externalId);
  form.append('file', file, file.name);
  return new Promise((resolve) => {
    const xhr = new XMLHttpRequest();
    xhr.open('POST', '/v1/jobs');
    xhr.setRequestHeader('authorization', `Bearer ${apiKey()}`);
    xhr.upload.addEventListener('progress', (event) => {
      if (event.lengthComputable && event.total > 0) view.show(Math.floor((event.loaded / event.total) * 100));
    });
    xhr.upload.addEventListener('load', () => {
      view.show(100);
      view.outcome.textContent = 'Sent; waiting for the server…';
    });
    xhr.addEventListener('load', () => {
      if (xhr.status === 202 || xhr.status === 200) {
        let id = null;
        try {
          id = JSON.parse(xhr.responseText).id;
        } catch {
          /* handled below */
        }
        if (typeof id === 'string') {
          view.show(100);
          view.item.setAttribute('data-upload-state', 'queued');
          view.item.setAttribute('data-job-id', id);
          view.outcome.replaceChildren(
            'Queued as ',
            el('a', { href: `/jobs/${encodeURIComponent(id)}` }, id),
            xhr.status === 200 ? ' (sent before: the same job)' : '',
          );
          onQueued(id);
          resolve();
          return;
        }
      }
      view.item.setAttribute('data-upload-state', 'failed');
      view.outcome.textContent = problemText(xhr.status, xhr.responseText);
      resolve();
    });
    const broken = (what) => () => {
      view.item.setAttribute('data-upload-state', 'failed');
      view.outcome.textContent = `${what}; the file was not queued. Try it again.`;
      resolve();
    };
    xhr.addEventListener('error', broken('The connection broke before the server answered'));
    xhr.addEventListener('timeout', broken('The server took too long to answer'));
    xhr.addEventListener('abort', broken('The upload was stopped'));
    xhr.send(form);
  });
}

function pump() {
  while (running < AT_ONCE && waiting.length > 0) {
    running += 1;
    upload(waiting.shift()).finally(() => {
      running -= 1;
      pump();
    });
  }
}

function start(files) {
  const status = document.getElementById('em-upload-status');
  const profile = document.getElementById('em-upload-profile').value;
  if (files.length === 0) {
    status.textContent = 'Choose or drop at least one file.';
    return false;
  }
  if (!apiKey()) {
    status.textContent = 'Enter an API key with submit scope first.';
    return false;
  }
  if (!profile) {
    status.textContent = 'Choose the profile to check the files against.';
    document.getElementById('em-upload-profile').focus();
    return false;
  }
  const externalId = document.getElementById('em-upload-external').value.trim();
  const list = document.getElementById('em-uploads');
  for (const file of files) {
    const view = row(file);
    list.append(view.item);
    waiting.push({ file, profile, externalId, view });
  }
  status.textContent = `${files.length} file${files.length === 1 ? '' : 's'} added; at most ${AT_ONCE} upload at a time.`;
  pump();
  return true;
}

/** The profiles of GET /v1/profiles in the picker; the operator's choice survives a reload of the list. */
export function fillUploadProfiles(items) {
  const select = document.getElementById('em-upload-profile');
  const chosen = select.value;
  select.replaceChildren(
    el('option', { value: '' }, 'choose a profile'),
    ...items.map(({ profile }) =>
      el('option', { value: profile.id }, profile.name ? `${profile.id} – ${profile.name}` : profile.id),
    ),
  );
  if (items.some(({ profile }) => profile.id === chosen)) select.value = chosen;
}

export function setupUploads(queued) {
  onQueued = queued;
  const input = document.getElementById('em-upload-files');
  const drop = document.getElementById('em-drop');
  document.getElementById('em-upload-form').addEventListener('submit', (event) => {
    event.preventDefault();
    // The chosen files stay chosen when something is missing, so the operator need not pick them again.
    if (start([...input.files])) input.value = '';
  });
  // A file dropped beside the box would make the browser leave the dashboard to show it.
  window.addEventListener('dragover', (event) => event.preventDefault());
  window.addEventListener('drop', (event) => event.preventDefault());
  drop.addEventListener('dragover', (event) => {
    event.preventDefault();
    drop.classList.add('em-drop-over');
  });
  drop.addEventListener('dragleave', () => drop.classList.remove('em-drop-over'));
  // A drop fills the file input, so dropped and chosen files take the same path (and the input
  // names them for screen readers); the upload starts with the button once a profile is chosen.
  drop.addEventListener('drop', (event) => {
    event.preventDefault();
    drop.classList.remove('em-drop-over');
    const files = event.dataTransfer?.files;
    if (!files || files.length === 0) return;
    input.files = files;
    const names = [...files].map((file) => file.name).join(', ');
    document.getElementById('em-upload-status').textContent =
      `${files.length} file${files.length === 1 ? '' : 's'} ready: ${names}. Press "Upload and check".`;
  });
}
