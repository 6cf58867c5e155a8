// The dashboard's uploads, filters and paging in Debian's Chromium (playwright-core, never a
// downloaded browser): two generated WAV files dropped on the page upload with their progress
// bars reaching 100 % and both jobs appear in the list; a file over the upload limit shows the
// API's problem in plain words; the search and date range filter the list; Next and Previous
// page through it by cursor. Screenshots go to test-output/ (git-ignored).
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeSine } from '../service/audio.ts';
import { client } from '../service/client.ts';
import { KEYS, startService, until, type TestService } from '../service/harness.ts';
import { hasTool } from '../helpers/tools.ts';
import { launchChromium } from '../helpers/browser.ts';

const OUTPUT_DIR = join(process.cwd(), 'test-output');
const dir = mkdtempSync(join(tmpdir(), 'earmark-dash-upload-'));
/** Invented deliveries: two uploads, and twelve URL jobs already in the list (they fail: nothing listens on port 9). */
const UPLOADS = ['Upload-Take-A.wav', 'upload-take-B.wav'];
const SEEDS = Array.from({ length: 12 }, (_, i) => `seed-${String(i).padStart(2, '0')}.wav`);

describe.skipIf(!hasTool('chromium'))('dashboard uploads, filters and paging in Chromium', () => {
  let service: TestService;
  let browser: Browser;
  let page: Page;
  const external: string[] = [];
  const uploadedIds: string[] = [];

  beforeAll(async () => {
    mkdirSync(OUTPUT_DIR, { recursive: true });
    service = await startService();
    browser = await launchChromium();
    const api = client(service.url);
    for (const [i, name] of SEEDS.entries()) {
      const res = await api.postJson(
        '/v1/jobs',
        { sourceUrl: `http://127.0.0.1:9/${name}`, profile: 'ebu-r128', externalId: `seed-order-${i}` },
        KEYS.alpha,
      );
      expect(res.status).toBe(202);
    }
    page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    page.on('pageerror', (error) => console.error('pageerror', error.message));
    page.on('request', (request) => {
      const url = request.url();
      if (!url.startsWith(service.url) && !url.startsWith('data:') && !url.startsWith('blob:')) external.push(url);
    });
    await page.goto(`${service.url}/`);
    await page.fill('#em-key', KEYS.alpha);
    await page.click('#em-key-form button');
    await page.waitForSelector('#em-upload-profile option[value="ebu-r128"]', { state: 'attached' });
  });

  afterAll(async () => {
    await browser?.close();
    await service?.close();
  });

  const rowsShown = (): Promise<string[]> =>
    page.$$eval('#em-jobs-body tr[data-job-id]', (rows) => rows.map((row) => row.getAttribute('data-job-id') ?? ''));
  /** until() with a name: a check that never comes true fails with what the page showed. */
  async function waitFor(what: string, check: () => Promise<boolean>): Promise<void> {
    const deadline = Date.now() + 20_000;
    while (!(await check())) {
      if (Date.now() > deadline) {
        const state = `${await page.textContent('#em-page-number')}; rows ${(await rowsShown()).length}; query ${await page.getAttribute('#em-jobs-body', 'data-query')}; ${await page.textContent('#em-live-status')}; ${await page.textContent('#em-list-more')}`;
        throw new Error(`${what} never happened (${state})`);
      }
      await new Promise((resolve) => setTimeout(resolve, 100));
    }
  }
  /** The rows once they answer a list query that has each part: "name=value", "name" (any
   * value) or "!name" (absent). */
  async function rowsFor(...parts: string[]): Promise<string[]> {
    await waitFor(`rows for ${parts.join('&')}`, async () => {
      const query = new URLSearchParams((await page.getAttribute('#em-jobs-body', 'data-query')) ?? '');
      return parts.every((part) => {
        if (part.startsWith('!')) return !query.has(part.slice(1));
        const [name, value] = part.split('=');
        return value === undefined ? query.has(name) : query.get(name) === value;
      });
    });
    return rowsShown();
  }
  /** Chromium's upload throttle (DevTools protocol); the returned function lifts it. */
  async function throttleUploads(bytesPerSecond: number): Promise<() => Promise<void>> {
    const cdp = await page.context().newCDPSession(page);
    const conditions = (upload: number) => ({
      offline: false,
      latency: 0,
      downloadThroughput: -1,
      uploadThroughput: upload,
    });
    await cdp.send('Network.enable');
    await cdp.send('Network.emulateNetworkConditions', conditions(bytesPerSecond));
    return async () => {
      await cdp.send('Network.emulateNetworkConditions', conditions(-1));
      await cdp.detach();
    };
  }
  const listCounter = async (name: string) => Number(await page.textContent(`[data-list-counter="${name}"] b`));
  /** The local calendar day of an instant, as a date input holds it. */
  const localDay = (iso: string) => {
    const d = new Date(iso);
    return `${d.getFullYear()}-${String(d.getMonth() + 1).padStart(2, '0')}-${String(d.getDate()).padStart(2, '0')}`;
  };

  it('uploads two dropped WAV files, each bar growing to 100 %, and lists both jobs', async () => {
    const files = [];
    for (const name of UPLOADS) {
      const path = await writeSine(join(dir, name), -23, 3);
      files.push({ name, base64: readFileSync(path).toString('base64') });
    }
    // Every value each bar takes, to check it only grows and ends at 100. (Page code as text:
    // the tests compile without the DOM's types.)
    await page.evaluate(`(() => {
      const seen = {};
      window.progressSeen = seen;
      new MutationObserver((records) => {
        for (const r of records) {
          if (r.target.tagName !== 'PROGRESS') continue;
          const name = r.target.closest('li').getAttribute('data-upload-name');
          (seen[name] ??= []).push(Number(r.target.getAttribute('value')));
        }
      }).observe(document.getElementById('em-uploads'), { subtree: true, attributes: true, attributeFilter: ['value'] });
    })()`);
    // A drop of the two files, as a file manager hands them to the page.
    const dropped = await page.evaluateHandle(`(() => {
      const transfer = new DataTransfer();
      for (const { name, base64 } of ${JSON.stringify(files)}) {
        const bytes = Uint8Array.from(atob(base64), (c) => c.charCodeAt(0));
        transfer.items.add(new File([bytes], name, { type: 'audio/wav' }));
      }
      return transfer;
    })()`);
    await page.dispatchEvent('#em-drop', 'drop', { dataTransfer: dropped });
    expect(await page.evaluate(`document.getElementById('em-upload-files').files.length`)).toBe(2);
    expect(await page.textContent('#em-upload-status')).toContain('2 files ready');

    await page.selectOption('#em-upload-profile', 'ebu-r128');
    await page.fill('#em-upload-external', 'batch-77');
    // Loopback sends a file in one go; Chromium's own throttle (DevTools protocol, still only
    // to this server) slows the upload so the bars show it under way.
    const unthrottle = await throttleUploads(500_000);
    await page.click('#em-upload-start');
    await until(async () => (await page.$$('#em-uploads li[data-upload-state="queued"]')).length === 2);
    await unthrottle();
    for (const name of UPLOADS) {
      const item = `#em-uploads li[data-upload-name="${name}"]`;
      expect(await page.getAttribute(`${item} progress`, 'value')).toBe('100');
      expect(await page.textContent(`${item} progress`)).toBe('100 %');
      expect(await page.textContent(`${item} .em-upload-percent`)).toBe('100 %');
      const id = (await page.getAttribute(item, 'data-job-id')) ?? '';
      expect(id).toMatch(/^j_/);
      expect(await page.getAttribute(`${item} .em-upload-outcome a`, 'href')).toBe(`/jobs/${id}`);
      uploadedIds.push(id);
    }
    const seen: unknown = await page.evaluate('window.progressSeen');
    for (const name of UPLOADS) {
      const values: unknown = Reflect.get(Object(seen), name);
      if (!Array.isArray(values)) throw new Error(`no progress seen for ${name}`);
      // Under way: at least one reading between the ends.
      expect(values.some((v) => v > 0 && v < 100)).toBe(true);
      expect(values.at(-1)).toBe(100);
      expect(values).toEqual([...values].sort((a, b) => a - b));
    }
    // Both jobs are in the list, with the batch's externalId.
    await until(async () => {
      const rows = await rowsShown();
      return uploadedIds.every((id) => rows.includes(id));
    });
    for (const id of uploadedIds)
      expect(await page.textContent(`tr[data-job-id="${id}"] [data-column="external-id"]`)).toBe('batch-77');
    await page.screenshot({ path: join(OUTPUT_DIR, 'dashboard-upload.png'), fullPage: true });
  });

  it('a file over the upload limit shows the API problem on its row, and no job', async () => {
    const big = join(dir, 'too-big.wav');
    writeFileSync(big, Buffer.alloc(6 * 1024 * 1024)); // the test service's limit is 5 MiB
    await page.setInputFiles('#em-upload-files', big);
    await page.click('#em-upload-start');
    const item = '#em-uploads li[data-upload-name="too-big.wav"]';
    await page.waitForSelector(`${item}[data-upload-state="failed"]`);
    expect(await page.textContent(`${item} .em-upload-outcome`)).toMatch(/^Refused, payload_too_large: .+/);
    expect(await page.$(`${item} .em-upload-outcome a`)).toBeNull();
  });

  it('search and date range filter the list; the counters follow the rows', async () => {
    await page.fill('#em-filter-q', 'UPLOAD-take');
    expect((await rowsFor('q=UPLOAD-take')).sort()).toEqual([...uploadedIds].sort());
    expect(await listCounter('shown')).toBe(2);
    await page.fill('#em-filter-q', 'Batch-77');
    expect((await rowsFor('q=Batch-77')).sort()).toEqual([...uploadedIds].sort());
    await page.fill('#em-filter-q', 'seed-order-1');
    // seed-order-1, -10 and -11
    expect(await rowsFor('q=seed-order-1')).toHaveLength(3);
    expect(await listCounter('shown')).toBe(3);
    await page.screenshot({ path: join(OUTPUT_DIR, 'dashboard-search.png'), fullPage: true });
    await page.fill('#em-filter-q', '');

    const all = (await client(service.url).get('/v1/jobs?limit=100', KEYS.alpha)).body.items as {
      id: string;
      createdAt: string;
    }[];
    expect(all).toHaveLength(SEEDS.length + UPLOADS.length);
    const today = localDay(all[0].createdAt);
    // The page sends the operator's day as instants: its local midnight to the next one.
    const dayBounds = (day: string) =>
      page.evaluate((d) => {
        const [y, m, n] = d.split('-').map(Number);
        return [new Date(y, m - 1, n).toISOString(), new Date(y, m - 1, n + 1).toISOString()];
      }, day);
    const [todayFrom, todayTo] = await dayBounds(today);
    await page.fill('#em-filter-from', today);
    await page.fill('#em-filter-to', today);
    expect(await rowsFor(`submittedFrom=${todayFrom}`, `submittedTo=${todayTo}`)).toHaveLength(all.length);
    // The day after: nothing submitted yet.
    const next = new Date(all[0].createdAt);
    next.setDate(next.getDate() + 1);
    const [nextFrom, nextTo] = await dayBounds(localDay(next.toISOString()));
    await page.fill('#em-filter-from', localDay(next.toISOString()));
    await page.fill('#em-filter-to', localDay(next.toISOString()));
    expect(await rowsFor(`submittedFrom=${nextFrom}`, `submittedTo=${nextTo}`)).toEqual([]);
    expect(await listCounter('shown')).toBe(0);
    // The day before "from" as "to" is said plainly, and not sent.
    await page.fill('#em-filter-to', today);
    await waitFor('the to-before-from message', async () =>
      ((await page.textContent('#em-live-status')) ?? '').includes('before the "from" date'),
    );
    expect(await page.getAttribute('#em-jobs-body', 'data-query')).toBe('');
    await page.fill('#em-filter-from', '');
    await page.fill('#em-filter-to', '');
    expect(await rowsFor('limit=50', '!submittedFrom', '!submittedTo', '!q')).toHaveLength(all.length);
  });

  it('pages forward and back by cursor, each job once, the counters on the page shown', async () => {
    const all = (await client(service.url).get('/v1/jobs?limit=100', KEYS.alpha)).body.items as { id: string }[];
    await page.selectOption('#em-filter-limit', '10');
    const first = await rowsFor('limit=10', '!cursor');
    expect(first).toEqual(all.slice(0, 10).map((j) => j.id));
    expect(await page.isDisabled('#em-page-prev')).toBe(true);
    await page.click('#em-page-next');
    const second = await rowsFor('limit=10', 'cursor');
    expect(await page.textContent('#em-page-number')).toBe('Page 2');
    expect([...first, ...second]).toEqual(all.map((j) => j.id));
    expect(await listCounter('shown')).toBe(second.length);
    expect(await page.isDisabled('#em-page-next')).toBe(true);
    await page.screenshot({ path: join(OUTPUT_DIR, 'dashboard-page-2.png'), fullPage: true });
    await page.click('#em-page-prev');
    expect(await rowsFor('limit=10', '!cursor')).toEqual(first);
    expect(await page.textContent('#em-page-number')).toBe('Page 1');

    // A filtered list pages too: the twelve seeds, ten then two.
    await page.fill('#em-filter-q', 'seed-');
    const seedsFirst = await rowsFor('q=seed-', '!cursor');
    expect(seedsFirst).toHaveLength(10);
    await page.click('#em-page-next');
    const seedsSecond = await rowsFor('q=seed-', 'cursor');
    expect(seedsSecond).toHaveLength(2);
    expect(new Set([...seedsFirst, ...seedsSecond]).size).toBe(SEEDS.length);
    expect(seedsFirst.concat(seedsSecond).some((id) => uploadedIds.includes(id))).toBe(false);
    // A new filter starts again at page 1.
    await page.fill('#em-filter-q', '');
    await rowsFor('limit=10', '!q', '!cursor');
    expect(await page.textContent('#em-page-number')).toBe('Page 1');
  });

  it('uploads a batch at most three at a time; the rest wait their turn', async () => {
    const paths = [];
    for (let i = 1; i <= 4; i++) paths.push(await writeSine(join(dir, `four-${i}.wav`), -23, 1));
    await page.fill('#em-upload-external', '');
    await page.setInputFiles('#em-upload-files', paths);
    const unthrottle = await throttleUploads(300_000);
    await page.click('#em-upload-start');
    const states = (): Promise<string[]> =>
      page.$$eval('#em-uploads li[data-upload-name^="four-"]', (items) =>
        items.map((item) => item.getAttribute('data-upload-state') ?? ''),
      );
    let mostAtOnce = 0;
    let sawWaiting = false;
    await until(async () => {
      const now = await states();
      const uploading = now.filter((s) => s === 'uploading').length;
      mostAtOnce = Math.max(mostAtOnce, uploading);
      if (uploading === 3 && now.includes('waiting')) sawWaiting = true;
      return now.length === 4 && now.every((s) => s === 'queued');
    }, 20);
    await unthrottle();
    expect(mostAtOnce).toBe(3);
    expect(sawWaiting).toBe(true);
  });

  it('fits a phone screen without sideways scrolling, upload rows included', async () => {
    await page.setViewportSize({ width: 390, height: 844 });
    const widths = await page.evaluate('[document.documentElement.scrollWidth, window.innerWidth]');
    expect(Array.isArray(widths) && widths[0] <= widths[1]).toBe(true);
    await page.screenshot({ path: join(OUTPUT_DIR, 'dashboard-upload-phone.png'), fullPage: true });
    await page.setViewportSize({ width: 1280, height: 900 });
  });

  it('made no request outside the server', () => {
    expect(external).toEqual([]);
  });
});
