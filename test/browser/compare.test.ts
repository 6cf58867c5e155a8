// The re-delivery page in Debian's Chromium (playwright-core, never a downloaded browser), against
// a running API and worker on real Redis: a failing delivery and its fix, compared.
// Screenshots go to test-output/ (git-ignored).
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeFixedDelivery, writeHotDelivery } from '../helpers/redelivery.ts';
import { hasTool } from '../helpers/tools.ts';
import { client, type Client } from '../service/client.ts';
import { KEYS, startService, until, type TestService } from '../service/harness.ts';
import { launchChromium } from '../helpers/browser.ts';

const OUTPUT_DIR = join(process.cwd(), 'test-output');
const PROFILE = 'delivery-broadcast-stereo';

describe.skipIf(!hasTool('chromium'))('re-delivery page in Chromium', () => {
  let service: TestService;
  let browser: Browser;
  let api: Client;
  let hotId = '';
  let fixedId = '';

  async function submitAndWait(path: string): Promise<string> {
    const submit = await api.upload(path, { profile: PROFILE }, KEYS.alpha);
    expect(submit.status).toBe(202);
    await until(async () => {
      const job = (await api.get(`/v1/jobs/${submit.body.id}`, KEYS.alpha)).body;
      return job.state === 'completed' || job.state === 'failed' ? job : null;
    });
    return submit.body.id;
  }

  beforeAll(async () => {
    mkdirSync(OUTPUT_DIR, { recursive: true });
    service = await startService();
    api = client(service.url);
    hotId = await submitAndWait(await writeHotDelivery(service.dir));
    const gainDb = (await api.get(`/v1/jobs/${hotId}/report`, KEYS.alpha)).body.correction.gainDb;
    fixedId = await submitAndWait(await writeFixedDelivery(service.dir, gainDb));
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    await service?.close();
  });

  it('shows the verdict before and after, readings with units and deltas, rules fixed and flags resolved', async () => {
    const comparison = (await api.get(`/v1/jobs/${hotId}/compare/${fixedId}`, KEYS.alpha)).body;
    const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
    const errors: string[] = [];
    const external: string[] = [];
    page.on('pageerror', (error) => errors.push(error.message));
    page.on('request', (request) => {
      if (!request.url().startsWith(service.url)) external.push(request.url());
    });
    await page.goto(`${service.url}/jobs/${hotId}/compare/${fixedId}`);
    await page.fill('#em-key', KEYS.alpha);
    await page.click('#em-key-form button');
    await page.waitForSelector('#em-cmp-body:not([hidden])');

    const headline = await page.innerText('#em-cmp-headline');
    expect(headline).toMatch(/^FAIL → PASS Better: \d+ flags resolved, 0 new, 0 persisting$/);
    expect(await page.getAttribute('#em-cmp-headline', 'class')).toContain('em-headline-pass');
    expect(await page.isHidden('#em-cmp-warnings')).toBe(true);

    // Readings: every cell of a value names its unit; the loudness change reads in LU.
    const integrated = page.locator('#em-cmp-readings tr[data-key="integratedLufs"] td');
    const cells = await integrated.allInnerTexts();
    const reading = comparison.readings.find((r: { key: string }) => r.key === 'integratedLufs');
    expect(cells).toEqual([
      `${reading.before.toFixed(1)} LUFS`,
      `${reading.after.toFixed(1)} LUFS`,
      `${reading.delta.toFixed(1)} LU`,
    ]);
    expect(await page.locator('#em-cmp-readings tr').count()).toBe(comparison.readings.length);
    for (const text of await page.locator('#em-cmp-readings td.em-num:not(.em-cmp-delta)').allInnerTexts())
      expect(text).toMatch(/^-?\d+(\.\d+)? (LUFS|LU|dBTP|dBFS|s|Hz|bit|ch|runs|samples|overs|dropouts)$/);

    // Rules: the three the fix mended read "fixed".
    for (const rule of ['programme-loudness', 'true-peak', 'no-clipping'])
      expect(await page.innerText(`#em-cmp-checks tr[data-rule="${rule}"] td:last-child`)).toBe('fixed');

    // Flags: the resolved group lists each of the first delivery's flags; the new group is empty.
    expect(await page.locator('[data-group="resolved"] li').count()).toBe(comparison.flags.resolved.length);
    expect(await page.innerText('[data-group="new"]')).toContain('None.');
    const firstResolved = await page.innerText('[data-group="resolved"] li >> nth=0');
    const f = comparison.flags.resolved[0];
    expect(firstResolved).toContain(`#${f.number} ${f.title}`);
    expect(firstResolved).toContain(f.startTimecode);

    // Each side links to its own report page.
    expect(await page.getAttribute('[data-side="before"] a', 'href')).toBe(`/jobs/${hotId}`);
    expect(await page.getAttribute('[data-side="after"] a', 'href')).toBe(`/jobs/${fixedId}`);
    await page.screenshot({ path: join(OUTPUT_DIR, 'compare-1280x800.png'), fullPage: true });

    // Phone width: no sideways scrolling of the page.
    await page.setViewportSize({ width: 390, height: 844 });
    const overflow = await page.evaluate('document.documentElement.scrollWidth - document.documentElement.clientWidth');
    expect(overflow).toBeLessThanOrEqual(0);
    // ... nor of a table inside its box.
    const tableOverflow = await page.evaluate(
      "Math.max(...[...document.querySelectorAll('.em-cmp-scroll')].map((b) => b.scrollWidth - b.clientWidth))",
    );
    expect(tableOverflow).toBeLessThanOrEqual(0);
    expect(await page.isVisible('#em-cmp-readings tr[data-key="integratedLufs"] .em-cmp-delta')).toBe(true);
    await page.screenshot({ path: join(OUTPUT_DIR, 'compare-narrow.png'), fullPage: true });
    expect(errors).toEqual([]);
    expect(external).toEqual([]);
    await page.close();
  });

  it('a job of another tenant reads as a typed error on the page, never a half-drawn comparison', async () => {
    const page = await browser.newPage();
    await page.goto(`${service.url}/jobs/${hotId}/compare/${fixedId}`);
    await page.fill('#em-key', KEYS.beta);
    await page.click('#em-key-form button');
    await page.waitForFunction("document.getElementById('em-load-status').textContent.startsWith('Cannot compare')");
    expect(await page.textContent('#em-load-status')).toMatch(/^Cannot compare: not_found: /);
    expect(await page.isHidden('#em-cmp-body')).toBe(true);
    await page.close();
  });
});
