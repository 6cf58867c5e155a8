// The operator's links in Debian's Chromium (playwright-core, never a downloaded browser), against
// a running API and worker on real Redis: the report page's downloads (fetched with the key, saved
// through a Blob) and compare links, and the dashboard's selection of two rows to compare or to
// export as JUnit, with a sign-off marker beside a verdict. Screenshots go to test-output/.
import { mkdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeFixedDelivery, writeHotDelivery } from '../helpers/redelivery.ts';
import { hasTool } from '../helpers/tools.ts';
import { client, type Client } from '../service/client.ts';
import { KEYS, startService, until, type TestService } from '../service/harness.ts';
import { launchChromium } from '../helpers/browser.ts';

const OUTPUT_DIR = join(process.cwd(), 'test-output');
const PROFILE = 'delivery-broadcast-stereo';
const CSV_HEADER =
  'file,flag_number,start_seconds,start_timecode,end_seconds,end_timecode,duration_seconds,start_sample,end_sample,channel,other_channel,kind,severity,rule_id,worst_value,worst_value_unit,count,detections,message';

describe.skipIf(!hasTool('chromium'))('downloads and compare links in Chromium', () => {
  let service: TestService;
  let browser: Browser;
  let api: Client;
  let hotId = '';
  let rerunId = '';
  let fixedId = '';
  const external: string[] = [];

  const finished = (id: string) =>
    until(async () => {
      const job = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body;
      return job.state === 'completed' || job.state === 'failed' ? job : null;
    });

  beforeAll(async () => {
    mkdirSync(OUTPUT_DIR, { recursive: true });
    service = await startService();
    api = client(service.url);
    hotId = (await api.upload(await writeHotDelivery(service.dir), { profile: PROFILE }, KEYS.alpha)).body.id;
    await finished(hotId);
    const gainDb = (await api.get(`/v1/jobs/${hotId}/report`, KEYS.alpha)).body.correction.gainDb;
    fixedId = (await api.upload(await writeFixedDelivery(service.dir, gainDb), { profile: PROFILE }, KEYS.alpha)).body
      .id;
    rerunId = (await api.postJson(`/v1/jobs/${hotId}/reruns`, { profile: PROFILE }, KEYS.alpha)).body.id;
    await finished(fixedId);
    await finished(rerunId);
    const signed = await api.postJson(
      `/v1/jobs/${hotId}/signoffs`,
      { decision: 'reject', note: 'Too loud; resend turned down.' },
      KEYS.alphaAdmin,
    );
    expect(signed.status).toBe(201);
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    await service?.close();
  });

  async function openWithKey(path: string, width = 1280): Promise<{ page: Page; errors: string[] }> {
    const page = await browser.newPage({ viewport: { width, height: 900 }, acceptDownloads: true });
    const errors: string[] = [];
    page.on('pageerror', (error) => errors.push(error.message));
    page.on('request', (request) => {
      const url = request.url();
      if (!url.startsWith(service.url) && !url.startsWith('blob:') && !url.startsWith('data:')) external.push(url);
    });
    await page.goto(`${service.url}${path}`);
    await page.fill('#em-key', KEYS.alpha);
    await page.click('#em-key-form button');
    return { page, errors };
  }

  // A string, as in the other page tests: the test's types have no DOM.
  const noSidewaysScroll = async (page: Page) => {
    const [scrollWidth, innerWidth] = (await page.evaluate(
      '[document.documentElement.scrollWidth, window.innerWidth]',
    )) as [number, number];
    expect(innerWidth).toBe(375);
    return scrollWidth <= innerWidth;
  };

  it('report page: saves the flags CSV, offers the markers WAV, links to compare with the re-run', async () => {
    const { page, errors } = await openWithKey(`/jobs/${hotId}`);
    await page.waitForSelector('#em-links:not([hidden]) [data-links="downloads"]');
    expect(await page.isVisible('button[data-download="wav"]')).toBe(true);
    expect(await page.textContent('[data-links="downloads"]')).toContain('a full copy of the audio');

    const [download] = await Promise.all([page.waitForEvent('download'), page.click('button[data-download="csv"]')]);
    expect(download.suggestedFilename()).toBe('river-documentary-hot.flags.csv');
    const csv = readFileSync(await download.path(), 'utf8');
    const lines = csv.split('\r\n');
    expect(lines[0]).toBe(CSV_HEADER);
    const report = (await api.get(`/v1/jobs/${hotId}/report`, KEYS.alpha)).body;
    expect(report.flags.length).toBeGreaterThan(0);
    // The first row: the file, flag number 1, its kind and severity as the report gives them.
    expect(lines[1]).toMatch(/^river-documentary-hot\.wav,1,[0-9.]+,/);
    expect(lines[1]).toContain(`,${report.flags[0].kind},${report.flags[0].severity},`);
    await page.waitForSelector('.em-download-status:has-text("Saved as river-documentary-hot.flags.csv")');

    // The JSON as the API serves it, sign-off included.
    const [json] = await Promise.all([page.waitForEvent('download'), page.click('button[data-download="json"]')]);
    expect(json.suggestedFilename()).toBe('river-documentary-hot.report.json');
    expect(JSON.parse(readFileSync(await json.path(), 'utf8')).signOff.decision).toBe('reject');
    // The markers copy: a "Preparing…" state first, then the saved file, a RIFF WAVE with a cue chunk.
    // Every text the status shows is recorded on the button (a string script: the test has no DOM types).
    await page.evaluate(`(() => {
      const button = document.querySelector('button[data-download="wav"]');
      const status = button.parentElement.querySelector('.em-download-status');
      const seen = [];
      new MutationObserver(() => {
        seen.push(status.textContent);
        button.setAttribute('data-seen', seen.join('|'));
      }).observe(status, { childList: true, characterData: true, subtree: true });
    })()`);
    const [markers] = await Promise.all([page.waitForEvent('download'), page.click('button[data-download="wav"]')]);
    expect(markers.suggestedFilename()).toBe('river-documentary-hot.markers.wav');
    const wav = readFileSync(await markers.path());
    expect(wav.subarray(0, 4).toString('latin1')).toBe('RIFF');
    expect(wav.subarray(8, 12).toString('latin1')).toBe('WAVE');
    expect(wav.includes(Buffer.from('cue ', 'latin1'))).toBe(true);
    await page.waitForSelector('.em-download-status:has-text("Saved as river-documentary-hot.markers.wav")');
    expect(await page.getAttribute('button[data-download="wav"]', 'data-seen')).toContain('Preparing…');
    await page.locator('#em-links').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(OUTPUT_DIR, 'links-report.png'), fullPage: true });

    // Print: the card is for the screen only.
    await page.emulateMedia({ media: 'print' });
    expect(await page.isVisible('#em-links')).toBe(false);
    await page.emulateMedia({ media: 'screen' });

    // Phone: nothing added scrolls sideways.
    await page.setViewportSize({ width: 375, height: 812 });
    expect(await noSidewaysScroll(page)).toBe(true);
    await page.locator('#em-links').scrollIntoViewIfNeeded();
    await page.locator('#em-links').screenshot({ path: join(OUTPUT_DIR, 'links-report-phone.png') });
    await page.setViewportSize({ width: 1280, height: 900 });

    const link = page.locator('a[data-links="compare-link"]');
    expect(await link.getAttribute('href')).toBe(`/jobs/${hotId}/compare/${rerunId}`);
    await link.click();
    await page.waitForURL(`**/jobs/${hotId}/compare/${rerunId}`);
    await page.waitForSelector('#em-cmp-body:not([hidden])');
    expect(await page.innerText('#em-cmp-headline')).toMatch(/^FAIL → FAIL/);
    await page.screenshot({ path: join(OUTPUT_DIR, 'links-compare-rerun.png'), fullPage: true });
    expect(errors).toEqual([]);
  });

  it('report page: the compare form puts the older job first; a re-run links back to its original', async () => {
    const { page, errors } = await openWithKey(`/jobs/${fixedId}`);
    await page.waitForSelector('#em-links:not([hidden]) [data-links="compare"]');
    expect(await page.locator('a[data-links="compare-link"]').count()).toBe(0);
    await page.fill('#em-compare-other', 'not-a-job');
    await page.click('.em-compare-form button');
    expect(await page.textContent('[data-links="compare-status"]')).toContain('j_');
    await page.fill('#em-compare-other', hotId);
    await page.click('.em-compare-form button');
    await page.waitForURL(`**/jobs/${hotId}/compare/${fixedId}`);
    await page.waitForSelector('#em-cmp-body:not([hidden])');

    await page.goto(`${service.url}/jobs/${rerunId}`);
    await page.waitForSelector('#em-links:not([hidden]) a[data-links="compare-link"]');
    expect(await page.getAttribute('a[data-links="compare-link"]', 'href')).toBe(`/jobs/${hotId}/compare/${rerunId}`);
    expect(errors).toEqual([]);
  });

  it('dashboard: a sign-off marker, two rows selected open the compare page, selected rows export as JUnit', async () => {
    const listed = (await api.get('/v1/jobs', KEYS.alpha)).body.items;
    expect(listed.find((j: { id: string }) => j.id === hotId).signOff).toMatchObject({ decision: 'reject' });
    expect(listed.find((j: { id: string }) => j.id === fixedId).signOff).toBeUndefined();

    const { page, errors } = await openWithKey('/');
    await page.waitForSelector(`tr[data-job-id="${hotId}"] [data-signoff="reject"]`);
    const mark = page.locator(`tr[data-job-id="${hotId}"] [data-signoff="reject"]`);
    expect(await mark.getAttribute('title')).toMatch(/^Rejected the fail verdict, by key [0-9a-f]{12} \(alpha\) on /);
    // The word shows; who and when follow for a screen reader.
    expect(await mark.innerText()).toMatch(/^rejected\b/);
    expect(await page.isDisabled('#em-select-compare')).toBe(true);

    // Checked newer first: the page still takes the older as the first delivery.
    await page.check(`input[data-select="${fixedId}"]`);
    // The selection survives the list's refresh: mark the row, wait until a refresh has replaced it.
    await page.$eval(`tr[data-job-id="${fixedId}"]`, (row) => row.setAttribute('data-stale', ''));
    await page.waitForSelector(`tr[data-job-id="${fixedId}"]:not([data-stale])`);
    expect(await page.isChecked(`input[data-select="${fixedId}"]`)).toBe(true);
    await page.check(`input[data-select="${hotId}"]`);
    expect(await page.textContent('#em-select-count')).toBe('2 selected');
    await page.screenshot({ path: join(OUTPUT_DIR, 'links-dashboard-selected.png'), fullPage: true });

    const [download] = await Promise.all([page.waitForEvent('download'), page.click('#em-select-junit')]);
    expect(download.suggestedFilename()).toBe('earmark.junit.xml');
    const xml = readFileSync(await download.path(), 'utf8');
    expect(xml).toMatch(/^<\?xml version="1\.0" encoding="UTF-8"\?>/);
    expect(xml.match(/<testcase /g)?.length).toBe(2);
    expect(xml).toContain(`[${hotId}]`);
    expect(xml).toContain(`[${fixedId}]`);
    expect(xml).toContain('<failure');

    // Phone: the selection column and the bar fit.
    await page.setViewportSize({ width: 375, height: 812 });
    expect(await noSidewaysScroll(page)).toBe(true);
    await page.screenshot({ path: join(OUTPUT_DIR, 'links-dashboard-phone.png'), fullPage: true });
    await page.setViewportSize({ width: 1280, height: 900 });

    await page.click('#em-select-compare');
    await page.waitForURL(`**/jobs/${hotId}/compare/${fixedId}`);
    await page.waitForSelector('#em-cmp-body:not([hidden])');
    expect(await page.innerText('#em-cmp-headline')).toMatch(/^FAIL → PASS/);
    expect(errors).toEqual([]);
    expect(external).toEqual([]);
  });
});
