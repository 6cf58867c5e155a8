// The report page in Debian's Chromium (playwright-core, never a downloaded browser) with made-up
// job views and reports served inside the browser: the flag table with hundreds of flags, the
// plot's lanes, the channel card, a failed job, the phone layout at 375 px and the print
// stylesheet. Screenshots and a PDF go to test-output/ (git-ignored).
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { QcReport } from '../../src/profiles/report.ts';
import { FAILURE_HINTS } from '../../src/views/assets/format.js';
import { renderReportPlot } from '../../src/views/report-plot.ts';
import { KEYS, startService, type TestService } from '../service/harness.ts';
import { hasTool } from '../helpers/tools.ts';
import { BUSY_FLAG_COUNT, BUSY_KINDS, SILENT_CHANNEL, busyReport } from '../views/busy-report.ts';
import { launchChromium } from '../helpers/browser.ts';

const OUTPUT_DIR = join(process.cwd(), 'test-output');
/** The little of the page's DOM the tests read (the Node tsconfig has no DOM types). */
interface PageGlobals {
  document: {
    scrollingElement: { scrollWidth: number };
    querySelectorAll(selector: string): ArrayLike<unknown>;
    querySelector(selector: string): unknown;
  };
  innerWidth: number;
  getComputedStyle(node: unknown): { display: string; fill: string; backgroundColor: string };
}

const completedJob = (id: string, report: QcReport) => ({
  id,
  state: 'completed',
  progressPercent: 100,
  verdict: report.verdict,
  headline: report.headline,
  error: null,
});

describe.skipIf(!hasTool('chromium'))('report page in Chromium', () => {
  let service: TestService;
  let browser: Browser;
  const external: string[] = [];

  /** Opens /jobs/:id with the job view and report answered in the browser. */
  async function openReport(
    id: string,
    job: object,
    report: QcReport | null,
    viewport = { width: 1280, height: 800 },
  ): Promise<Page> {
    const page = await browser.newPage({ viewport });
    const errors: string[] = [];
    page.on('pageerror', (error) => errors.push(error.message));
    page.on('request', (request) => {
      const url = request.url();
      if (!url.startsWith(service.url) && !url.startsWith('blob:') && !url.startsWith('data:')) external.push(url);
    });
    await page.route(
      (url) => url.pathname.startsWith(`/v1/jobs/${id}`),
      (route) => {
        const path = new URL(route.request().url()).pathname;
        if (path.endsWith('/plot.svg') && report)
          return route.fulfill({ contentType: 'image/svg+xml', body: renderReportPlot(report) });
        return route.fulfill({
          contentType: 'application/json',
          body: JSON.stringify(path.endsWith('/report') ? report : job),
        });
      },
    );
    await page.goto(`${service.url}/jobs/${id}`);
    await page.fill('#em-key', KEYS.alpha);
    await page.click('#em-key-form button');
    page.on('close', () => expect(errors).toEqual([]));
    return page;
  }

  const noSidewaysScroll = (page: Page) =>
    page.evaluate(
      () =>
        (globalThis as unknown as PageGlobals).document.scrollingElement.scrollWidth <=
        (globalThis as unknown as PageGlobals).innerWidth,
    );

  beforeAll(async () => {
    mkdirSync(OUTPUT_DIR, { recursive: true });
    service = await startService({ worker: false });
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    await service?.close();
  });

  it('hundreds of flags: grouped by kind with totals, each flag on expand, lanes on the plot, spans under the curves', async () => {
    const id = 'j_busyreportwithmanyflags1';
    const report = busyReport();
    const page = await openReport(id, completedJob(id, report), report);
    await page.waitForSelector('#em-report-body:not([hidden]) .em-plot');

    // The plot: one lane per kind, one marker per flag, every span painted before (beneath) the first curve.
    expect(await page.locator('.em-plot .em-lane').count()).toBe(BUSY_KINDS.length);
    expect(await page.locator('.em-plot .em-flag').count()).toBe(BUSY_FLAG_COUNT);
    const spansBeneath = await page.evaluate(() => {
      const doc = (globalThis as unknown as PageGlobals).document;
      const curve = doc.querySelector('.em-plot polyline') as { compareDocumentPosition(n: unknown): number };
      const spans = Array.from(doc.querySelectorAll('.em-plot .em-flag-span'));
      // DOCUMENT_POSITION_FOLLOWING (4): the curve comes after the span, so it is painted over it.
      return spans.length > 0 && spans.every((span) => (curve.compareDocumentPosition(span) & 2) === 2);
    });
    expect(spansBeneath).toBe(true);

    // The table: one group row per repeating kind, its flags closed; every flag has a row.
    const groups = page.locator('#em-flags-body tr.em-flag-group');
    expect(await groups.count()).toBe(BUSY_KINDS.filter((k) => k.flags > 1).length);
    expect(await page.locator('#em-flags-body tr.em-flag-item').count()).toBe(BUSY_FLAG_COUNT);
    expect(await page.locator('#em-flags-body tr.em-flag-item:visible').count()).toBe(1); // the one DC offset
    const clipGroup = page.locator('#em-flags-body tr.em-flag-group[data-kind="clipping"]');
    const clipFlags = report.flags.filter((f) => f.kind === 'clipping');
    const groupText = await clipGroup.innerText();
    for (const part of [
      'Clipping run · 260 flags',
      'FAIL',
      clipFlags[0].startTimecode,
      `${clipFlags[0].startSeconds.toFixed(3)} s`,
      String(clipFlags.reduce((n, f) => n + f.count, 0)),
      'dBFS',
      '1 L',
      '2 R',
      'no-clips',
    ])
      expect(groupText).toContain(part);

    // Expand: the 260 clip runs show, each with its start, end, duration, count, worst value and channel.
    await clipGroup.locator('.em-group-toggle').click();
    expect(await clipGroup.locator('.em-group-toggle').getAttribute('aria-expanded')).toBe('true');
    const clipRows = page.locator('#em-flags-body tr.em-flag-item[data-kind="clipping"]');
    expect(await clipRows.locator('visible=true').count()).toBe(260);
    const flag = clipFlags[7];
    const row = page.locator(`#em-flags-body tr[data-flag-index="${flag.number - 1}"]`);
    const cells = (await row.locator('td').allInnerTexts()).map((t) => t.replace(/\s+/g, ' ').trim());
    for (const part of [`#${flag.number}`, 'Clipping run', flag.message]) expect(cells[0]).toContain(part);
    expect(cells.slice(1, 9)).toEqual([
      'FAIL',
      `${flag.startTimecode} ${flag.startSeconds.toFixed(3)} s`,
      `${flag.endTimecode} ${flag.endSeconds.toFixed(3)} s`,
      '2.0 ms', // the generated clip runs last 2 ms
      String(flag.count),
      `${(flag.worstValue ?? Number.NaN).toFixed(1).replace(/^-(0\.0)$/, '$1')} dBFS`,
      flag.channelName,
      'no-clips',
    ]);
    // Choosing it puts the plot's cursor on it.
    await row.locator('.em-flag-go').click();
    expect(await page.getAttribute('#em-plot-cursor', 'data-flag-index')).toBe(String(flag.number - 1));
    expect(await row.getAttribute('class')).toContain('em-selected');

    // Dropouts of digital zero say so; the channel card has both channels with units.
    const digital = report.flags.find((f) => f.kind === 'dropout' && f.worstValue === null);
    expect(await page.innerText(`#em-flags-body tr[data-flag-index="${(digital?.number ?? 0) - 1}"] td >> nth=6`)).toBe(
      'digital silence',
    );
    expect(await page.locator('#em-channels-body tr').count()).toBe(2);
    expect(await page.innerText('#em-channels-body tr[data-channel="1 L"]')).toContain('130 runs, 4212 samples');
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-busy-1280x800.png'), fullPage: true });
    await page.close();
  });

  it('at 375 x 812 nothing scrolls sideways: tables stack into labelled rows, the outcome is never cut', async () => {
    const id = 'j_busyreportonaphone00001';
    const report = busyReport();
    // One failing check with a long finding: its outcome must still show whole.
    report.checks = [
      ...report.checks,
      {
        ruleId: 'no-clips',
        type: 'clipping',
        severity: 'fail',
        source: null,
        measured: 260,
        unit: 'runs',
        limit: { max: 0 },
        outcome: 'fail',
        passed: false,
        explanation: '260 clipping runs (4212 + 3980 samples at or over -0.1 dBFS) where none are allowed',
      },
    ];
    // And a declared-loudness table of five columns.
    report.declaredLoudness = [
      {
        source: 'bext',
        rows: [
          { field: 'integratedLufs', unit: 'LUFS', declared: -23, measured: -16.2, measuredMinusDeclared: 6.8 },
          { field: 'maxTruePeakDbtp', unit: 'dBTP', declared: -1, measured: 0.6, measuredMinusDeclared: 1.6 },
        ],
      },
    ];
    const page = await openReport(id, completedJob(id, report), report, { width: 375, height: 812 });
    await page.waitForSelector('#em-report-body:not([hidden]) .em-plot');
    await page.waitForSelector('#em-declared:not([hidden])');
    expect(await noSidewaysScroll(page)).toBe(true);
    // Stacked, the declared table needs no sideways scroll of its own either.
    const declaredScrolls = await page
      .locator('#em-declared table')
      .evaluate((node) => (node as { scrollWidth: number }).scrollWidth > 375);
    expect(declaredScrolls).toBe(false);
    await page.locator('#em-flags-body tr.em-flag-group[data-kind="clipping"] .em-group-toggle').click();
    expect(await noSidewaysScroll(page)).toBe(true);
    const outcome = page.locator('#em-checks-body tr[data-rule-id="no-clips"] td[data-label="Outcome"]');
    expect(await outcome.innerText()).toBe('not met');
    const box = await outcome.boundingBox();
    expect((box?.x ?? -1) >= 0 && (box?.x ?? 0) + (box?.width ?? 0) <= 375).toBe(true);
    const cut = await outcome.evaluate((node) => {
      const n = node as { scrollWidth: number; clientWidth: number };
      return n.scrollWidth > n.clientWidth;
    });
    expect(cut).toBe(false);
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-busy-375x812.png'), fullPage: true });
    await page.close();
  });

  it('print: no header, key form or buttons; plot and tables on white; every flag listed; a PDF', async () => {
    const id = 'j_busyreportforprinting01';
    const report = busyReport();
    const page = await openReport(id, completedJob(id, report), report);
    await page.waitForSelector('#em-report-body:not([hidden]) .em-plot');
    await page.emulateMedia({ media: 'print' });
    const shown = await page.evaluate(() => {
      const doc = (globalThis as unknown as PageGlobals).document;
      const visible = (n: unknown) => (n as { checkVisibility(): boolean }).checkVisibility();
      return {
        buttons: Array.from(doc.querySelectorAll('button')).filter(visible).length,
        header: visible(doc.querySelector('.em-top')),
        audio: visible(doc.querySelector('#em-player')),
        caution: visible(doc.querySelector('.em-caution')),
        flagRows: Array.from(doc.querySelectorAll('#em-flags-body tr.em-flag-item')).filter(visible).length,
        plotGround: (globalThis as unknown as PageGlobals).getComputedStyle(doc.querySelector('.em-plot-bg')).fill,
        body: (globalThis as unknown as PageGlobals).getComputedStyle(doc.querySelector('body')).backgroundColor,
      };
    });
    expect(shown).toMatchObject({ buttons: 0, header: false, audio: false, caution: false, flagRows: BUSY_FLAG_COUNT });
    expect(shown.plotGround).toBe('rgb(255, 255, 255)');
    expect(shown.body).toBe('rgb(255, 255, 255)');
    // Each flag's number and title stay in print, without its button.
    expect(await page.innerText('#em-flags-body tr[data-flag-index="0"]')).toContain(`#${report.flags[0].number} `);
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-print.png'), fullPage: true });
    await page.pdf({ path: join(OUTPUT_DIR, 'report-print.pdf'), format: 'A4', printBackground: true });
    await page.close();
  });

  it('a failed job shows the code, the message, the job facts and what to do; no empty cards; fits a phone', async () => {
    const id = 'j_failedfetchofasourceurl';
    const job = {
      id,
      state: 'failed',
      progressPercent: 0,
      createdAt: '2026-03-02T09:15:00.000Z',
      startedAt: '2026-03-02T09:15:01.000Z',
      finishedAt: '2026-03-02T09:16:30.000Z',
      attemptsMade: 3,
      profile: { id: 'podcast', version: '1' },
      source: { kind: 'url', url: 'https://media.example.test/deliveries/episode-12.wav' },
      externalId: 'ord-4471',
      metadata: null,
      verdict: null,
      headline: null,
      summary: null,
      error: { code: 'source_fetch_failed', message: 'sourceUrl answered HTTP 404' },
      callback: null,
      links: { self: `/v1/jobs/${id}`, report: null },
    };
    const page = await openReport(id, job, null, { width: 375, height: 812 });
    await page.waitForSelector('#em-job-failed:not([hidden])');
    expect(await page.textContent('#em-failure-code')).toBe('source_fetch_failed');
    expect(await page.textContent('#em-failure-message')).toBe('sourceUrl answered HTTP 404 (after 3 attempts)');
    expect(await page.textContent('#em-failure-hint')).toBe(FAILURE_HINTS.source_fetch_failed);
    const facts = await page.innerText('#em-failure-job');
    for (const part of ['Source URL', job.source.url, 'podcast v1', 'Attempts', '3', 'ord-4471', id])
      expect(facts).toContain(part);
    // The failure card and the review panel (a failed job can be re-run) are the cards shown: the
    // report's cards stay hidden, not empty.
    await page.waitForSelector('#em-review:not([hidden])');
    const shown = await page.locator('.em-card:visible').evaluateAll((cards) => cards.map((c) => c.id));
    expect(shown).toEqual(['em-job-failed', 'em-review']);
    expect(await page.locator('#em-report-body').isHidden()).toBe(true);
    expect(await noSidewaysScroll(page)).toBe(true);
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-failed-375x812.png'), fullPage: true });
    await page.close();
  });

  it('a channel of digital silence reads "digital silence", not a number or a dash', async () => {
    const id = 'j_reportwithasilentchannel';
    const report = busyReport();
    report.channels = [...report.channels, SILENT_CHANNEL];
    report.format = { ...report.format, channels: 3, channelLabels: ['L', 'R', 'C'] };
    report.downmix = { ...report.downmix, channelIntegratedLufs: [-19.6, -20.1, null] };
    const page = await openReport(id, completedJob(id, report), report);
    await page.waitForSelector('#em-channels:not([hidden])');
    const silent = page.locator('#em-channels-body tr[data-channel="3 C"]');
    expect(await silent.getAttribute('class')).toContain('em-channel-silent');
    const values = await silent.locator('td').allInnerTexts();
    expect(values.slice(0, 6)).toEqual(Array(6).fill('digital silence'));
    await page.close();
  });

  it('made no request outside the server', () => {
    expect(external).toEqual([]);
  });
});
