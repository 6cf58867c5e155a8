// The report page's review panel in Debian's Chromium (playwright-core, never a downloaded
// browser): an operator signs off a fail verdict and sees the decision with who and when, then
// re-runs the job against an older profile version and follows the link to the new job's report.
// Screenshots go to test-output/ (git-ignored).
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { client } from '../service/client.ts';
import { KEYS, startService, until, type TestService } from '../service/harness.ts';
import { writeSine } from '../service/audio.ts';
import { hasTool } from '../helpers/tools.ts';
import { launchChromium } from '../helpers/browser.ts';

const OUTPUT_DIR = join(process.cwd(), 'test-output');

/** Invented house profile: integrated loudness within 1 LU of the target, or fail. */
const house = (targetLufs: number) => ({
  name: 'House loudness',
  description: 'Invented house rule for the tests',
  basis: 'house rule',
  rules: [{ id: 'loudness', type: 'integrated-loudness', severity: 'fail', targetLufs, toleranceLu: 1 }],
});

describe.skipIf(!hasTool('chromium'))('review panel in Chromium', () => {
  let service: TestService;
  let browser: Browser;
  let jobId = '';
  const external: string[] = [];

  beforeAll(async () => {
    mkdirSync(OUTPUT_DIR, { recursive: true });
    service = await startService();
    browser = await launchChromium();
    const api = client(service.url);
    await api.put('/v1/profiles/house-loud', house(-23), KEYS.alphaAdmin);
    await api.put('/v1/profiles/house-loud', house(-16), KEYS.alphaAdmin);
    // 997 Hz stereo sine at -23 dBFS peak reads -23.0 LUFS (ITU-R BS.1770-5): fails -16 +/-1 LU, passes -23.
    const wav = await writeSine(join(service.dir, 'harbour-promo.wav'), -23, 3);
    const submitted = await api.upload(wav, { profile: 'house-loud' }, KEYS.alpha);
    jobId = submitted.body.id;
    await until(async () => (await api.get(`/v1/jobs/${jobId}`, KEYS.alpha)).body.state === 'completed');
  });

  afterAll(async () => {
    await browser?.close();
    await service?.close();
  });

  it('signs off a fail verdict, then re-runs against version 1.0.0 and links to the new job', async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    const errors: string[] = [];
    page.on('pageerror', (error) => errors.push(error.message));
    page.on('request', (request) => {
      const url = request.url();
      if (!url.startsWith(service.url) && !url.startsWith('data:') && !url.startsWith('blob:')) external.push(url);
    });
    await page.goto(`${service.url}/jobs/${jobId}`);
    // The admin key: signing off needs the admin scope (which includes submit and read).
    await page.fill('#em-key', KEYS.alphaAdmin);
    await page.click('#em-key-form button');
    await page.waitForSelector('#em-review:not([hidden]) [data-review="signoff"]');
    expect(await page.textContent('[data-review="current"]')).toContain('Not signed off yet');

    // Accepting a fail without a note is refused, and the page says why.
    await page.check('input[name="em-review-decision"][value="accept"]');
    await page.click('[data-review="signoff"] button[type="submit"]');
    await page.waitForSelector('[data-review="signoff-status"]:has-text("validation_failed")');

    await page.fill('#em-review-note', 'Approved for the quieter cut; agreed with the producer.');
    await page.click('[data-review="signoff"] button[type="submit"]');
    await page.waitForSelector('.em-review-accept');
    const who = await page.textContent('.em-review-who');
    expect(who).toMatch(
      /^Accepted the fail verdict, by key [0-9a-f]{12} \(alpha\) on \d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2}$/,
    );
    expect(await page.textContent('.em-review-note')).toBe('Approved for the quieter cut; agreed with the producer.');
    // The API holds the same decision.
    const view = await client(service.url).get(`/v1/jobs/${jobId}`, KEYS.alpha);
    expect(view.body.signOff).toMatchObject({ decision: 'accept', verdict: 'fail', number: 1 });
    await page.locator('#em-review').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(OUTPUT_DIR, 'review-signed-off.png'), fullPage: true });

    // A second decision replaces the first on the page; the history keeps both.
    await page.check('input[name="em-review-decision"][value="reject"]');
    await page.fill('#em-review-note', 'Producer withdrew the approval.');
    await page.click('[data-review="signoff"] button[type="submit"]');
    await page.waitForSelector('.em-review-reject');
    expect(await page.textContent('[data-review="history"] summary')).toBe('History (2)');
    expect(await page.$$eval('[data-review="history"] li', (items) => items.length)).toBe(2);

    // Re-run against the older version (-23 LUFS target).
    await page.selectOption('#em-review-profile', 'house-loud');
    const versions = await page.$$eval('#em-review-version option', (o) => o.map((x) => x.getAttribute('value')));
    expect(versions).toEqual(['', '1.0.0']);
    await page.selectOption('#em-review-version', '1.0.0');
    await page.click('[data-review="rerun"] button[type="submit"]');
    const link = await page.waitForSelector('[data-review="new-job"]');
    const newId = (await link.textContent()) ?? '';
    expect(newId).toMatch(/^j_[a-z0-9]+$/);
    expect(await link.getAttribute('href')).toBe(`/jobs/${newId}`);
    await page.screenshot({ path: join(OUTPUT_DIR, 'review-rerun-queued.png'), fullPage: true });

    // The new job's page: the verdict the older version gives, and the link back.
    await link.click();
    await page.waitForURL(`**/jobs/${newId}`);
    await page.waitForSelector('#em-report-body:not([hidden])', { timeout: 60_000 });
    await page.waitForSelector('[data-review="rerun-of"]');
    expect(await page.textContent('#em-verdict')).toContain('PASS');
    expect(await page.textContent('#em-profile')).toContain('house-loud v1.0.0');
    expect(await page.getAttribute('[data-review="rerun-of"] a', 'href')).toBe(`/jobs/${jobId}`);
    expect(await page.textContent('[data-review="no-signoff"]')).toContain('A pass needs no sign-off');
    await page.screenshot({ path: join(OUTPUT_DIR, 'review-rerun-report.png'), fullPage: true });

    // Phone width: the panel fits without sideways scrolling.
    await page.setViewportSize({ width: 390, height: 844 });
    const overflow = await page.$eval('#em-review', (node) => node.scrollWidth - node.clientWidth);
    expect(overflow).toBeLessThanOrEqual(0);
    await page.screenshot({ path: join(OUTPUT_DIR, 'review-narrow.png'), fullPage: true });

    expect(errors).toEqual([]);
    expect(external).toEqual([]);
  });
});
