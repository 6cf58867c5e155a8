// Report page, links card: downloads of the report JSON, the flags CSV and the markers WAV (each
// fetched with the key, see download.js), and links to compare this job with its re-runs, its
// original, or any job id. Filled when report.js announces a completed job's report
// ('earmark:report'), so the report is fetched once.
import { api, el } from './common.js';
import { saveDownload, sizeText } from './download.js';

const inPage = typeof document !== 'undefined';
const WAVE_CONTAINERS = new Set(['wav', 'rf64', 'bw64']);
const JOB_ID = /^j_[a-z0-9]{20,40}$/;

/** The compare page with the first delivery first. */
export const comparePath = (firstId, secondId) =>
  `/jobs/${encodeURIComponent(firstId)}/compare/${encodeURIComponent(secondId)}`;

/** A save name from the delivered file's name (as the API's own: letters, digits, dot, dash, underscore), or the job id. */
export function saveName(fileName, jobId, suffix) {
  const base = String(fileName ?? '')
    .replace(/\.[^.]*$/, '')
    .replace(/[^A-Za-z0-9._-]+/g, '_')
    .replace(/^[._]+/, '');
  return `${base.slice(0, 100) || jobId}${suffix}`;
}

/** Whether a markers copy can be made, and if not, why in words. */
export function markersOffer(report) {
  const container = report.format?.container ?? 'unknown';
  if (WAVE_CONTAINERS.has(container)) return { offered: true, reason: null };
  return {
    offered: false,
    reason: `Markers WAV: not offered for this ${container} file. Markers are written into a copy of the delivered WAVE, RF64 or BW64 file itself, bit for bit; other formats would have to be decoded, so they are not copied.`,
  };
}

/** The compare links a job's own lineage gives: [{ href, text }]. */
export function lineageCompareLinks(job) {
  const links = [];
  if (job.rerunOf)
    links.push({ href: comparePath(job.rerunOf, job.id), text: `Compare with the original ${job.rerunOf}` });
  for (const id of job.reruns ?? []) links.push({ href: comparePath(job.id, id), text: `Compare with re-run ${id}` });
  return links;
}

function downloadButton(label, path, fallbackName, note) {
  const status = el('span', { class: 'em-status em-download-status', role: 'status' });
  const button = el(
    'button',
    { type: 'button', class: 'em-quiet', 'data-download': fallbackName.split('.').pop() },
    label,
  );
  button.addEventListener('click', async () => {
    button.disabled = true;
    try {
      const saved = await saveDownload(path, fallbackName, (words) => {
        status.textContent = words;
      });
      status.textContent = `Saved as ${saved.fileName} (${sizeText(saved.sizeBytes)}).`;
    } catch (error) {
      status.textContent = `Not saved: ${error.message}`;
    } finally {
      button.disabled = false;
    }
  });
  return el('li', {}, button, note ? el('small', { class: 'em-status' }, ` ${note}`) : null, ' ', status);
}

function downloads(job, report) {
  const base = `/v1/jobs/${encodeURIComponent(job.id)}`;
  // The server names the CSV and WAV itself; the report JSON is named here the same way.
  const name = (suffix) => saveName(report.file?.name, job.id, suffix);
  const markers = markersOffer(report);
  const sourceBytes = job.source?.kind === 'upload' ? job.source.sizeBytes : null;
  return el(
    'div',
    { class: 'em-links-block', 'data-links': 'downloads' },
    el('h3', {}, 'Downloads'),
    el(
      'ul',
      { class: 'em-downloads' },
      downloadButton('Report JSON', `${base}/report`, name('.report.json')),
      downloadButton('Flags CSV', `${base}/flags.csv`, name('.flags.csv'), '(one row per listed flag)'),
      markers.offered
        ? downloadButton(
            'Markers WAV',
            `${base}/markers.wav`,
            name('.markers.wav'),
            `(a full copy of the audio${sourceBytes ? `, about ${sizeText(sourceBytes)}` : ''}, with a cue marker at each flag: it takes a while and the browser holds it until saved)`,
          )
        : el('li', { class: 'em-status', 'data-links': 'no-markers' }, markers.reason),
    ),
  );
}

function compareForm(job) {
  const input = el('input', {
    id: 'em-compare-other',
    type: 'text',
    autocomplete: 'off',
    spellcheck: 'false',
    placeholder: 'j_…',
    maxlength: '41',
  });
  const status = el('p', { class: 'em-status', role: 'status', 'data-links': 'compare-status' });
  const form = el(
    'form',
    { class: 'em-compare-form', 'aria-label': 'Compare with another job' },
    el('label', { for: 'em-compare-other' }, 'Compare with job id'),
    input,
    el('button', { type: 'submit' }, 'Compare'),
  );
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    const otherId = input.value.trim();
    if (!JOB_ID.test(otherId) || otherId === job.id) {
      status.textContent =
        otherId === job.id ? 'That is this job.' : 'A job id reads j_ followed by letters and digits.';
      return;
    }
    status.textContent = 'Looking up the job…';
    try {
      const other = await api(`/v1/jobs/${encodeURIComponent(otherId)}`).then((r) => r.json());
      // The older submission is the first delivery.
      const otherFirst = Date.parse(other.createdAt) < Date.parse(job.createdAt);
      window.location.assign(otherFirst ? comparePath(otherId, job.id) : comparePath(job.id, otherId));
    } catch (error) {
      status.textContent = `Cannot compare: ${error.message}`;
    }
  });
  return [form, status];
}

function compareBlock(job) {
  const links = lineageCompareLinks(job);
  return el(
    'div',
    { class: 'em-links-block', 'data-links': 'compare' },
    el('h3', {}, 'Compare'),
    links.length
      ? el(
          'ul',
          { class: 'em-compare-links' },
          ...links.map((link) => el('li', {}, el('a', { href: link.href, 'data-links': 'compare-link' }, link.text))),
        )
      : null,
    el('p', { class: 'em-status' }, 'The older job is taken as the first delivery, the newer as the re-delivery.'),
    ...compareForm(job),
  );
}

if (inPage) {
  document.addEventListener('earmark:report', (event) => {
    const { job, report } = event.detail;
    const card = document.getElementById('em-links');
    if (!card) return;
    card.replaceChildren(
      el('h2', { id: 'em-links-title', style: 'margin-top:0' }, 'Downloads and comparison'),
      downloads(job, report),
      compareBlock(job),
    );
    card.hidden = false;
  });
}
