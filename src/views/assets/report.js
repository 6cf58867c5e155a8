// Report page: the headline and any integrity problem first, then verdict, readings, the
// server-rendered loudness plot, the flag table (a flag chosen moves the plot's cursor; a short
// listening excerpt per flag), each channel's readings, and the checks. A failed job shows its
// error, the job's facts and what to do.
import { api, el, setupKeyForm, text, verdictBadge } from './common.js';
import { hasHead, headFacts, headStripSvg } from './head-strip.js';
import { renderDeclaredLoudness } from './declared.js';
import { renderDialogue } from './dialogue.js';
import { renderDownmix } from './downmix.js';
import { renderChannels } from './channels.js';
import { renderFlagTable } from './flag-table.js';
import { dateTimeText, failureHint, flagCountsText, headlineNamesVerdict, outcomeText } from './format.js';

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
  for (const item of document.querySelectorAll('#em-flags-body tr.em-flag-item'))
    item.classList.toggle('em-selected', item.dataset.flagIndex === String(index));
  document.getElementById('em-cursor-status').textContent =
    `Cursor at ${flag.startTimecode}: #${flag.number} ${flag.title} (${flag.severity})`;
}

async function listen(flag) {
  const player = document.getElementById('em-player');
  const status = document.getElementById('em-player-status');
  const start = Math.max(0, flag.startSeconds - EXCERPT_PAD_SECONDS);
  const end = Math.min(start + EXCERPT_MAX_SECONDS, Math.max(flag.endSeconds + EXCERPT_PAD_SECONDS, start + 1));
  status.textContent = 'Loading excerpt…';
  try {
    const response = await api(
      `/v1/jobs/${encodeURIComponent(jobId)}/excerpt?startSeconds=${start.toFixed(3)}&endSeconds=${end.toFixed(3)}`,
    );
    const blob = await response.blob();
    if (currentAudioUrl) URL.revokeObjectURL(currentAudioUrl);
    currentAudioUrl = URL.createObjectURL(blob);
    player.src = currentAudioUrl;
    player.dataset.startSeconds = start.toFixed(3);
    status.textContent = `Excerpt of flag #${flag.number} from ${flag.startTimecode}, ${(end - start).toFixed(1)} s. Press play when your level is set.`;
  } catch (error) {
    status.textContent = `Cannot load the excerpt: ${error.message}`;
  }
}

/** tone: pass, warn or fail (the tint); badge: a verdict to show in front, when the words lack it. */
function showHeadline(words, tone, badge) {
  const headline = document.getElementById('em-headline');
  headline.className = `em-headline em-headline-${tone}`;
  headline.replaceChildren(...(badge ? [verdictBadge(badge), ' '] : []), words);
  headline.hidden = false;
}

function renderIntegrity(report) {
  const panel = document.getElementById('em-integrity');
  const integrity = report.integrity;
  if (!integrity || integrity.intact) {
    panel.hidden = true;
    return;
  }
  const severity = integrity.severity ?? 'fail';
  panel.className = `em-integrity em-integrity-${severity}`;
  document.getElementById('em-integrity-title').textContent =
    severity === 'fail' ? 'Damaged file: this fails the report' : 'Damaged file: this profile counts it as a warning';
  document.getElementById('em-integrity-note').textContent =
    'The audio the file declares is not all there or not all readable. The readings, plot and flags below may not describe the whole file.';
  document
    .getElementById('em-integrity-problems')
    .replaceChildren(
      ...integrity.problems.map((problem) =>
        el(
          'li',
          { 'data-code': problem.code },
          el('span', { class: 'em-tc' }, problem.atTimecode ?? text(problem.atSeconds, 3, 's')),
          ' ',
          el('span', {}, problem.message),
          ' ',
          el('code', { class: 'em-status' }, problem.code),
        ),
      ),
    );
  panel.hidden = false;
}

function renderFailure(job) {
  const code = job.error?.code ?? 'internal_error';
  const message = job.error?.message ?? 'the job failed without a reason';
  showHeadline(`Analysis failed: ${message}`, 'fail', null);
  document.getElementById('em-failure-code').textContent = code;
  document.getElementById('em-failure-message').textContent =
    `${message}${job.attemptsMade > 1 ? ` (after ${job.attemptsMade} attempts)` : ''}`;
  document.getElementById('em-failure-hint').textContent = failureHint(code);
  const source = job.source?.kind === 'url' ? ['Source URL', job.source.url] : ['File', job.source?.fileName];
  const facts = [
    source,
    ['Profile', job.profile ? `${job.profile.id} v${job.profile.version}` : null],
    ['Attempts', job.attemptsMade === undefined ? null : String(job.attemptsMade)],
    ['Submitted (your time)', job.createdAt ? dateTimeText(job.createdAt) : null],
    ['Failed (your time)', job.finishedAt ? dateTimeText(job.finishedAt) : null],
    ['External ID', job.externalId],
    ['Job', job.id],
  ].filter(([, value]) => value !== null && value !== undefined && value !== '');
  document
    .getElementById('em-failure-job')
    .replaceChildren(...facts.map(([label, value]) => el('div', {}, el('dt', {}, label), el('dd', {}, value))));
  document.getElementById('em-job-failed').hidden = false;
}

function renderChecks(report) {
  document
    .getElementById('em-checks-body')
    .replaceChildren(
      ...report.checks.map((check) =>
        el(
          'tr',
          { 'data-rule-id': check.ruleId, 'data-outcome': check.outcome },
          el('td', { 'data-label': 'Rule' }, check.ruleId),
          el('td', { 'data-label': 'Finding' }, check.explanation),
          el('td', { 'data-label': 'Severity' }, check.severity),
          el(
            'td',
            { 'data-label': 'Outcome', class: `em-outcome-${check.outcome}${check.passed ? ' em-outcome-met' : ''}` },
            outcomeText(check),
          ),
        ),
      ),
    );
}

function renderSummary(report) {
  const s = report.summary;
  const items = [
    ['Integrated', text(s.integratedLufs, 1, 'LUFS')],
    ['Loudness range', text(s.loudnessRangeLu, 1, 'LU')],
    ['Max short-term', text(s.maxShortTermLufs, 1, 'LUFS')],
    ['Max momentary', text(s.maxMomentaryLufs, 1, 'LUFS')],
    ['True peak', text(s.truePeakDbtp, 1, 'dBTP')],
    ['Sample peak', text(s.samplePeakDbfs, 1, 'dBFS')],
    ['Duration', `${text(report.format.durationSeconds, 2, 's')}`],
    [
      'Format',
      `${report.format.sampleRate} Hz · ${report.format.channels} ch${report.format.bitsPerSample ? ` · ${report.format.bitsPerSample}-bit` : ''}`,
    ],
  ];
  if (report.correction)
    items.push([
      'Gain to target',
      `${text(report.correction.gainDb, 1, 'dB')}${report.correction.exceedsCeiling ? ' (needs a limiter)' : ''}`,
    ]);
  document
    .getElementById('em-metrics')
    .replaceChildren(...items.map(([label, value]) => el('div', {}, el('dt', {}, label), el('dd', {}, value))));
}

function renderHead(report) {
  const section = document.getElementById('em-head-section');
  section.hidden = !hasHead(report);
  if (section.hidden) return;
  document.getElementById('em-head').innerHTML = headStripSvg(report);
  document.getElementById('em-head-facts').replaceChildren(...headFacts(report).map((fact) => el('li', {}, fact)));
}

/** The detections past the event cap are not in the counts: said beside them, detailed below the table. */
function unlistedCountText(report) {
  const total = (report.unlistedEvents ?? []).reduce((sum, u) => sum + u.count, 0);
  const what = total === 1 ? 'detection' : 'detections';
  return total > 0 ? `; plus ${total} ${what} past the event cap, not in these counts (see below the table)` : '';
}

function renderFlags(report) {
  document.getElementById('em-flag-counts').textContent =
    `${flagCountsText(report)}${report.flagsTruncated ? ` (${report.flags.length} of ${report.flagsTotal} listed)` : ''}${unlistedCountText(report)}`;
  renderFlagTable(report, { show: moveCursor, listen });
}

async function load() {
  const status = document.getElementById('em-load-status');
  try {
    const job = await api(`/v1/jobs/${encodeURIComponent(jobId)}`).then((r) => r.json());
    if (job.state !== 'completed') {
      if (job.state === 'failed') {
        renderFailure(job);
        status.textContent = '';
        return;
      }
      status.textContent = `Job is ${job.state}${job.state === 'active' ? ` (${job.progressPercent}%)` : ''}; this page updates when it completes.`;
      setTimeout(load, 2000);
      return;
    }
    const [report, plot] = await Promise.all([
      api(`/v1/jobs/${encodeURIComponent(jobId)}/report`).then((r) => r.json()),
      api(`/v1/jobs/${encodeURIComponent(jobId)}/plot.svg`).then((r) => r.text()),
    ]);
    if (report.headline)
      showHeadline(
        report.headline,
        report.verdict,
        headlineNamesVerdict(report.headline, report.verdict) ? null : report.verdict,
      );
    renderIntegrity(report);
    document.getElementById('em-file').textContent = report.file?.name ?? job.id;
    document.getElementById('em-profile').textContent =
      `${report.profile.name} (${report.profile.id} v${report.profile.version})`;
    document.getElementById('em-verdict').replaceChildren(verdictBadge(report.verdict, true));
    document.getElementById('em-plot').innerHTML = plot;
    renderSummary(report);
    renderHead(report);
    renderChecks(report);
    renderFlags(report);
    renderChannels(report);
    renderDeclaredLoudness(report);
    renderDownmix(report);
    renderDialogue(report);
    document.getElementById('em-report-body').hidden = false;
    // Cards in scripts of their own (report-links.js) take the report from here, not a second fetch.
    document.dispatchEvent(new CustomEvent('earmark:report', { detail: { job, report } }));
    status.textContent = '';
  } catch (error) {
    status.textContent = `Cannot load: ${error.message}. Enter an API key with read scope.`;
  }
}

setupKeyForm(load);
load();
