// Report page: verdict, checks, the server-rendered loudness plot, flags that move the plot's
// cursor when chosen, and a short listening excerpt per flag.
import { api, el, setupKeyForm, text, verdictBadge } from './common.js';

const jobId = document.body.dataset.jobId;
const EXCERPT_PAD_SECONDS = 1.5;
const EXCERPT_MAX_SECONDS = 10;
let currentAudioUrl = null;

function moveCursor(flag, index) {
  const cursor = document.getElementById('em-plot-cursor');
  if (!cursor) return;
  const left = Number(cursor.dataset.plotLeft);
  const width = Number(cursor.dataset.plotWidth);
  const duration = Number(cursor.dataset.duration);
  const x = left + (Math.min(flag.startSeconds, duration) / duration) * width;
  cursor.setAttribute('x1', String(x));
  cursor.setAttribute('x2', String(x));
  cursor.setAttribute('visibility', 'visible');
  cursor.dataset.flagIndex = String(index);
  for (const item of document.querySelectorAll('.em-flags li')) item.classList.toggle('em-selected', item.dataset.flagIndex === String(index));
  document.getElementById('em-cursor-status').textContent = `Cursor at ${flag.startTimecode}: ${flag.kind.replace(/_/g, ' ')}`;
}

async function listen(flag) {
  const player = document.getElementById('em-player');
  const status = document.getElementById('em-player-status');
  const start = Math.max(0, flag.startSeconds - EXCERPT_PAD_SECONDS);
  const end = Math.min(start + EXCERPT_MAX_SECONDS, Math.max(flag.endSeconds + EXCERPT_PAD_SECONDS, start + 1));
  status.textContent = 'Loading excerpt…';
  try {
    const response = await api(`/v1/jobs/${encodeURIComponent(jobId)}/excerpt?startSeconds=${start.toFixed(3)}&endSeconds=${end.toFixed(3)}`);
    const blob = await response.blob();
    if (currentAudioUrl) URL.revokeObjectURL(currentAudioUrl);
    currentAudioUrl = URL.createObjectURL(blob);
    player.src = currentAudioUrl;
    player.dataset.startSeconds = start.toFixed(3);
    status.textContent = `Excerpt ${flag.startTimecode}, ${(end - start).toFixed(1)} s. Press play when your level is set.`;
  } catch (error) {
    status.textContent = `Cannot load the excerpt: ${error.message}`;
  }
}

function renderChecks(report) {
  document.getElementById('em-checks-body').replaceChildren(...report.checks.map((check) =>
    el('tr', { 'data-rule-id': check.ruleId },
      el('td', {}, check.ruleId),
      el('td', {}, check.explanation),
      el('td', {}, check.severity),
      el('td', { class: `em-outcome-${check.outcome}` }, check.passed ? 'met' : check.outcome === 'not_measurable' ? 'not measurable' : 'not met'))));
}

function renderSummary(report) {
  const s = report.summary;
  const items = [
    ['Integrated', text(s.integratedLufs, 1, 'LUFS')], ['Loudness range', text(s.loudnessRangeLu, 1, 'LU')],
    ['Max short-term', text(s.maxShortTermLufs, 1, 'LUFS')], ['Max momentary', text(s.maxMomentaryLufs, 1, 'LUFS')],
    ['True peak', text(s.truePeakDbtp, 1, 'dBTP')], ['Sample peak', text(s.samplePeakDbfs, 1, 'dBFS')],
    ['Duration', `${text(report.format.durationSeconds, 2, 's')}`], ['Format', `${report.format.sampleRate} Hz · ${report.format.channels} ch${report.format.bitsPerSample ? ` · ${report.format.bitsPerSample}-bit` : ''}`],
  ];
  if (report.correction) items.push(['Gain to target', `${text(report.correction.gainDb, 1, 'dB')}${report.correction.exceedsCeiling ? ' (needs a limiter)' : ''}`]);
  document.getElementById('em-metrics').replaceChildren(...items.map(([label, value]) => el('div', {}, el('dt', {}, label), el('dd', {}, value))));
}

function renderFlags(report) {
  const list = document.getElementById('em-flags');
  if (report.flags.length === 0) { list.replaceChildren(el('li', { class: 'em-status' }, 'No time-located problems.')); return; }
  list.replaceChildren(...report.flags.map((flag, index) => el('li', { 'data-flag-index': String(index) },
    el('span', { class: `em-swatch em-swatch-${flag.kind}`, 'aria-hidden': 'true' }),
    el('button', { type: 'button', class: 'em-flag-go', onclick: () => moveCursor(flag, index), 'aria-label': `Show ${flag.kind.replace(/_/g, ' ')} at ${flag.startTimecode} on the plot` },
      `${flag.startTimecode} ${flag.kind.replace(/_/g, ' ')} · ${flag.severity}${flag.channel === null ? '' : ` · ch ${flag.channel + 1}`}`),
    el('button', { type: 'button', class: 'em-quiet em-listen', onclick: () => listen(flag), 'aria-label': `Listen to ${flag.kind.replace(/_/g, ' ')} at ${flag.startTimecode}` }, 'Listen'))));
  if (report.flagsTruncated) list.append(el('li', { class: 'em-status' }, `${report.flagsTotal - report.flags.length} more flags not listed.`));
}

async function load() {
  const status = document.getElementById('em-load-status');
  try {
    const job = await api(`/v1/jobs/${encodeURIComponent(jobId)}`).then((r) => r.json());
    if (job.state !== 'completed') {
      status.textContent = job.state === 'failed' ? `Failed: ${job.error?.code} ${job.error?.message ?? ''}` : `Job is ${job.state}${job.state === 'active' ? ` (${job.progressPercent}%)` : ''}; this page updates when it completes.`;
      if (job.state !== 'failed') setTimeout(load, 2000);
      return;
    }
    const [report, plot] = await Promise.all([api(`/v1/jobs/${encodeURIComponent(jobId)}/report`).then((r) => r.json()), api(`/v1/jobs/${encodeURIComponent(jobId)}/plot.svg`).then((r) => r.text())]);
    document.getElementById('em-file').textContent = report.file?.name ?? job.id;
    document.getElementById('em-profile').textContent = `${report.profile.name} (${report.profile.id} v${report.profile.version})`;
    document.getElementById('em-verdict').replaceChildren(verdictBadge(report.verdict, true));
    document.getElementById('em-plot').innerHTML = plot;
    renderSummary(report);
    renderChecks(report);
    renderFlags(report);
    status.textContent = '';
  } catch (error) {
    status.textContent = `Cannot load: ${error.message}. Enter an API key with read scope.`;
  }
}

setupKeyForm(load);
load();
