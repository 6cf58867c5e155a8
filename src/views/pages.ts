// The two HTML pages. They hold no data: the page script fetches it with the API key the
// operator enters once (kept in session storage), so the pages need no cookie or session.

import { declaredLoudnessSection } from './declared-section.ts';
import { dialogueSection } from './dialogue-section.ts';
import { downmixSection } from './downmix-section.ts';
import { escapeXml } from './loudness-plot.ts';
import { channelsSection } from './channels-section.ts';
import { flagsSection } from './flags-section.ts';
import { uploadSection } from './upload-section.ts';

function shell(title: string, bodyAttributes: string, main: string, script: string): string {
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeXml(title)} · Earmark</title>
<link rel="stylesheet" href="/assets/earmark.css">
</head>
<body ${bodyAttributes}>
<header class="em-top">
  <h1><a href="/" style="color:inherit;text-decoration:none">Earmark</a> <span>${escapeXml(title)}</span></h1>
  <form id="em-key-form" class="em-key" aria-label="API key">
    <label for="em-key" class="em-visually-hidden">API key</label>
    <input id="em-key" type="password" autocomplete="off" placeholder="API key (kept for this tab only)">
    <button type="submit">Use key</button>
  </form>
</header>
<main>
${main}
</main>
<script type="module" src="/assets/${script}"></script>
</body>
</html>
`;
}

export function dashboardPage(): string {
  return shell(
    'Queue',
    'data-page="dashboard"',
    `
<h2 id="em-counters-title" class="em-counters-title">All your jobs in the queue <small>(the list's filters do not apply here)</small></h2>
<section id="em-counters" class="em-counters" aria-labelledby="em-counters-title" aria-live="polite"></section>
<p id="em-live-status" class="em-status" role="status"></p>
${uploadSection()}
<section class="em-card" aria-labelledby="em-jobs-title">
  <h2 id="em-jobs-title" style="margin-top:0">Recent jobs</h2>
  <div class="em-filters">
    <label for="em-filter-state">State
      <select id="em-filter-state"><option value="">any</option><option>queued</option><option>active</option><option>completed</option><option>failed</option></select></label>
    <label for="em-filter-verdict">Verdict
      <select id="em-filter-verdict"><option value="">any</option><option>pass</option><option>warn</option><option>fail</option></select></label>
    <label for="em-filter-profile">Profile
      <select id="em-filter-profile"><option value="">any</option></select></label>
    <label for="em-filter-from"><span>Submitted from <small>(your date)</small></span>
      <input id="em-filter-from" type="date"></label>
    <label for="em-filter-to"><span>Submitted to <small>(your date, included)</small></span>
      <input id="em-filter-to" type="date"></label>
    <label for="em-filter-q"><span>Search <small>(file name or external ID)</small></span>
      <input id="em-filter-q" type="search" maxlength="200" autocomplete="off"></label>
    <label for="em-filter-limit">Rows per page
      <select id="em-filter-limit"><option>10</option><option>20</option><option selected>50</option><option>100</option></select></label>
  </div>
  <h3 id="em-list-counters-title" class="em-counters-title">In this list</h3>
  <div id="em-list-counters" class="em-counters em-list-counters" aria-labelledby="em-list-counters-title" aria-live="polite"></div>
  <p id="em-list-more" class="em-status"></p>
  <div class="em-select-bar" role="group" aria-label="Selected jobs">
    <span id="em-select-count" class="em-status">0 selected</span>
    <button type="button" id="em-select-compare" disabled title="Two completed jobs: the older is the first delivery">Compare</button>
    <button type="button" id="em-select-junit" class="em-quiet" disabled>Export JUnit</button>
    <button type="button" id="em-select-clear" class="em-quiet" disabled>Clear</button>
    <span id="em-select-status" class="em-status" role="status"></span>
  </div>
  <div style="overflow-x:auto">
  <table>
    <thead><tr><th scope="col" class="em-select-cell"><span class="em-visually-hidden">Select</span></th><th scope="col">File</th><th scope="col" class="em-hide-narrow">External ID</th><th scope="col">Profile</th><th scope="col">State</th><th scope="col">Verdict</th><th scope="col" class="em-hide-narrow">Integrated</th><th scope="col" class="em-hide-narrow">True peak</th><th scope="col" class="em-hide-narrow">Submitted <small>(your time)</small></th><th scope="col">Finished <small>(your time)</small></th></tr></thead>
    <tbody id="em-jobs-body"></tbody>
  </table>
  </div>
  <nav class="em-pager" aria-label="Pages of the list">
    <button type="button" id="em-page-prev" class="em-quiet" disabled>Previous page</button>
    <span id="em-page-number" class="em-status" aria-live="polite">Page 1</span>
    <button type="button" id="em-page-next" class="em-quiet" disabled>Next page</button>
  </nav>
</section>`,
    'dashboard.js',
  );
}

export function reportPage(jobId: string): string {
  // Order matters: the headline, then any integrity problem or job failure, come before the
  // readings, so a damaged file or a failed job is the first thing read or heard.
  return shell(
    'Report',
    `data-page="report" data-job-id="${escapeXml(jobId)}"`,
    `
<h2 id="em-headline" class="em-headline" hidden></h2>
<p id="em-load-status" class="em-status" role="status">Loading…</p>
<section id="em-integrity" class="em-integrity" aria-labelledby="em-integrity-title" hidden>
  <h2 id="em-integrity-title"></h2>
  <p id="em-integrity-note"></p>
  <ul id="em-integrity-problems" class="em-integrity-problems"></ul>
</section>
<section id="em-job-failed" class="em-card em-job-failed" aria-labelledby="em-job-failed-title" hidden>
  <h2 id="em-job-failed-title">Why it failed and what to do</h2>
  <dl class="em-failure">
    <div><dt>Error code</dt><dd><code id="em-failure-code"></code></dd></div>
    <div><dt>What happened</dt><dd id="em-failure-message"></dd></div>
    <div><dt>What to do</dt><dd id="em-failure-hint"></dd></div>
  </dl>
  <dl id="em-failure-job" class="em-metrics"></dl>
</section>
<div id="em-report-body" hidden>
<section class="em-card" aria-labelledby="em-file">
  <div style="display:flex;flex-wrap:wrap;gap:1rem;align-items:center;justify-content:space-between">
    <div><h2 id="em-file" style="margin:0;word-break:break-all"></h2><div id="em-profile" class="em-status"></div></div>
    <div id="em-verdict" aria-label="Verdict"></div>
  </div>
  <dl id="em-metrics" class="em-metrics" style="margin-top:1rem"></dl>
</section>
<section id="em-links" class="em-card em-links em-screen-only" aria-labelledby="em-links-title" hidden></section>
<section class="em-card em-plot-card" aria-labelledby="em-plot-title">
  <h2 id="em-plot-title" style="margin-top:0">Loudness over time</h2>
  <p class="em-status">Thin line: momentary (400 ms). Thick line: short-term (3 s). Band: the profile's target. Above the plot, one lane per flag kind (remarks fainter); the tint under the lines shows where flags lie.</p>
  <div id="em-plot"></div>
  <p id="em-cursor-status" class="em-status" aria-live="polite"></p>
</section>
${flagsSection()}
${channelsSection()}
<section id="em-head-section" class="em-card" aria-labelledby="em-head-title" hidden>
  <h2 id="em-head-title" style="margin-top:0">Head</h2>
  <div id="em-head"></div>
  <ul id="em-head-facts" class="em-status"></ul>
</section>
<section class="em-card" aria-labelledby="em-checks-title">
  <h2 id="em-checks-title" style="margin-top:0">Checks</h2>
  <table class="em-stack em-checks-table"><thead><tr><th scope="col">Rule</th><th scope="col">Finding</th><th scope="col">Severity</th><th scope="col">Outcome</th></tr></thead><tbody id="em-checks-body"></tbody></table>
</section>
${declaredLoudnessSection()}
${downmixSection()}
${dialogueSection()}
</div>
<section id="em-review" class="em-card em-review" aria-labelledby="em-review-title" hidden></section>
<script type="module" src="/assets/review.js"></script>
<script type="module" src="/assets/report-links.js"></script>`,
    'report.js',
  );
}

/** Re-delivery comparison (assets/compare.js fills it from GET /v1/jobs/:id/compare/:otherId). */
export function comparePage(jobId: string, otherJobId: string): string {
  return shell(
    'Re-delivery',
    `data-page="compare" data-job-id="${escapeXml(jobId)}" data-other-job-id="${escapeXml(otherJobId)}"`,
    `
<h2 id="em-cmp-headline" class="em-headline" hidden></h2>
<p id="em-load-status" class="em-status" role="status">Loading…</p>
<ul id="em-cmp-warnings" class="em-cmp-warnings" hidden></ul>
<div id="em-cmp-body" hidden>
<section class="em-card" aria-labelledby="em-cmp-files-title">
  <h2 id="em-cmp-files-title" style="margin-top:0">Deliveries</h2>
  <div id="em-cmp-sides" class="em-cmp-sides"></div>
</section>
<section class="em-card" aria-labelledby="em-cmp-readings-title">
  <h2 id="em-cmp-readings-title" style="margin-top:0">Readings</h2>
  <div class="em-cmp-scroll">
  <table class="em-cmp-table"><thead><tr><th scope="col">Reading</th><th scope="col">Before</th><th scope="col">After</th><th scope="col">Change</th></tr></thead><tbody id="em-cmp-readings"></tbody></table>
  </div>
</section>
<section class="em-card" aria-labelledby="em-cmp-checks-title">
  <h2 id="em-cmp-checks-title" style="margin-top:0">Rules</h2>
  <div class="em-cmp-scroll">
  <table class="em-cmp-table"><thead><tr><th scope="col">Rule</th><th scope="col">Before</th><th scope="col">After</th><th scope="col">Change</th></tr></thead><tbody id="em-cmp-checks"></tbody></table>
  </div>
</section>
<section class="em-card" aria-labelledby="em-cmp-flags-title">
  <h2 id="em-cmp-flags-title" style="margin-top:0">Flags</h2>
  <p id="em-cmp-flag-counts" class="em-flag-counts"></p>
  <p id="em-cmp-flag-rule" class="em-status"></p>
  <div id="em-cmp-flags" class="em-cmp-flag-groups"></div>
</section>
</div>`,
    'compare.js',
  );
}
