// The report page in Debian's Chromium when the analysis kept only its first events: the flag
// counts say detections past the event cap are left out, and below the table how many, by kind;
// a report whose every finding lies past the cap says so instead of "No time-located findings".
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { QcReport } from '../../src/profiles/report.ts';
import { renderReportPlot } from '../../src/views/report-plot.ts';
import { KEYS, startService, type TestService } from '../service/harness.ts';
import { hasTool } from '../helpers/tools.ts';
import { sampleReport } from '../views/sample-report.ts';
import { launchChromium } from '../helpers/browser.ts';

describe.skipIf(!hasTool('chromium'))('report page: detections past the event cap', () => {
  let service: TestService;
  let browser: Browser;
  const external: string[] = [];

  async function openReport(id: string, report: QcReport): Promise<Page> {
    const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
    const errors: string[] = [];
    page.on('pageerror', (error) => errors.push(error.message));
    page.on('request', (request) => {
      const url = request.url();
      if (!url.startsWith(service.url) && !url.startsWith('blob:') && !url.startsWith('data:')) external.push(url);
    });
    const job = { id, state: 'completed', progressPercent: 100, verdict: report.verdict, headline: report.headline };
    await page.route(
      (url) => url.pathname.startsWith(`/v1/jobs/${id}`),
      (route) => {
        const path = new URL(route.request().url()).pathname;
        if (path.endsWith('/plot.svg'))
          return route.fulfill({ contentType: 'image/svg+xml', body: renderReportPlot(report) });
        return route.fulfill({
          contentType: 'application/json',
          body: JSON.stringify(path.endsWith('/report') ? report : { ...job, error: null }),
        });
      },
    );
    await page.goto(`${service.url}/jobs/${id}`);
    await page.fill('#em-key', KEYS.alpha);
    await page.click('#em-key-form button');
    page.on('close', () => expect(errors).toEqual([]));
    return page;
  }

  beforeAll(async () => {
    service = await startService({ worker: false });
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    await service?.close();
  });

  it('names the unlisted detections by kind below the table and beside the counts', async () => {
    const report: QcReport = {
      ...sampleReport(),
      unlistedEvents: [{ kind: 'clipping', ruleId: 'no-clipping', severity: 'fail', count: 74205 }],
    };
    const page = await openReport('j_unlisteddetectionsmade01', report);
    await page.waitForSelector('#em-flags-body tr');
    expect(await page.textContent('#em-flag-counts')).toContain(
      '; plus 74205 detections past the event cap, not in these counts (see below the table)',
    );
    expect(await page.textContent('#em-flags-truncated')).toBe(
      "Listing cut: 74205 more detections past the analysis's event cap, not listed and not merged into the flags counted here: clipping 74205 (no-clipping, fail). The checks count them all.",
    );
    await page.close();
  });

  it('a report whose only finding lies past the cap does not say "No time-located findings"', async () => {
    const report: QcReport = {
      ...sampleReport(),
      flags: [],
      flagsTotal: 0,
      flagCounts: { fail: 0, warn: 0, remark: 0 },
      unlistedEvents: [{ kind: 'dropout', ruleId: 'no-dropouts', severity: 'fail', count: 1 }],
    };
    const page = await openReport('j_unlisteddetectionsmade02', report);
    await page.waitForSelector('#em-flags-body tr');
    expect(await page.textContent('#em-flags-body')).toBe(
      'No flags listed: see the detections past the event cap below.',
    );
    expect(await page.textContent('#em-flag-counts')).toContain('; plus 1 detection past the event cap');
    expect(await page.textContent('#em-flags-truncated')).toContain('dropout 1 (no-dropouts, fail)');
    await page.close();
  });

  it('made no request outside the server', () => {
    expect(external).toEqual([]);
  });
});
