// The dashboard's list in Debian's Chromium (playwright-core, never a downloaded browser): the
// profile filter is filled once a key is entered and filters by profile, times carry a date, the
// client's externalId has a column, and the list counters agree with the rows shown.
// Screenshots go to test-output/ (git-ignored).
import { mkdirSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { client } from '../service/client.ts';
import { KEYS, startService, until, type TestService } from '../service/harness.ts';
import { writeSine } from '../service/audio.ts';
import { hasTool } from '../helpers/tools.ts';
import { launchChromium } from '../helpers/browser.ts';

const OUTPUT_DIR = join(process.cwd(), 'test-output');
const DATE_TIME = /^\d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2}$/;
const dir = mkdtempSync(join(tmpdir(), 'earmark-dash-'));

/** Invented jobs: two on one profile, one on another, each with the client's own id. */
const JOBS = [
  { file: 'morning-bulletin.wav', profile: 'ebu-r128', externalId: 'ord-1001' },
  { file: 'evening-bulletin.wav', profile: 'ebu-r128', externalId: 'ord-1002' },
  { file: 'garden-talk-ep3.wav', profile: 'podcast', externalId: 'ep-0003' },
];

describe.skipIf(!hasTool('chromium'))('dashboard list in Chromium', () => {
  let service: TestService;
  let browser: Browser;
  const external: string[] = [];
  const ids = new Map<string, string>();

  beforeAll(async () => {
    mkdirSync(OUTPUT_DIR, { recursive: true });
    service = await startService();
    browser = await launchChromium();
    const api = client(service.url);
    for (const job of JOBS) {
      const wav = await writeSine(join(dir, job.file), -23, 3);
      const submitted = await api.upload(wav, { profile: job.profile, externalId: job.externalId }, KEYS.alpha);
      expect(submitted.status).toBe(202);
      ids.set(job.externalId, submitted.body.id);
    }
    for (const id of ids.values())
      await until(async () => {
        const state = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body.state;
        return state === 'completed' || state === 'failed';
      });
  });

  afterAll(async () => {
    await browser?.close();
    await service?.close();
  });

  async function rowsShown(page: Page): Promise<string[]> {
    return page.$$eval('#em-jobs-body tr[data-job-id]', (rows) =>
      rows.map((row) => row.getAttribute('data-job-id') ?? ''),
    );
  }

  async function listCounter(page: Page, name: string): Promise<number> {
    return Number(await page.textContent(`[data-list-counter="${name}"] b`));
  }

  it('fills the profile filter after the key, filters by profile, shows dates and externalIds', async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
    page.on('pageerror', (error) => console.error('pageerror', error.message));
    page.on('request', (request) => {
      const url = request.url();
      if (!url.startsWith(service.url) && !url.startsWith('data:')) external.push(url);
    });
    await page.goto(`${service.url}/`);
    // No key yet: nothing to list but "any".
    expect(await page.$$eval('#em-filter-profile option', (o) => o.length)).toBe(1);
    await page.fill('#em-key', KEYS.alpha);
    await page.click('#em-key-form button');

    const profiles = (await client(service.url).get('/v1/profiles', KEYS.alpha)).body.items as {
      profile: { id: string; name: string };
    }[];
    await page.waitForSelector('#em-filter-profile option[value="podcast"]', { state: 'attached' });
    const options = await page.$$eval('#em-filter-profile option', (o) =>
      o.map((option) => ({ value: option.getAttribute('value'), label: option.textContent })),
    );
    expect(options).toEqual([
      { value: '', label: 'any' },
      ...profiles.map(({ profile }) => ({ value: profile.id, label: `${profile.id} – ${profile.name}` })),
    ]);
    expect(options.every((o) => o.label?.trim())).toBe(true);

    // All three jobs, each with its externalId and a dated time.
    await until(async () => (await rowsShown(page)).length === JOBS.length);
    for (const job of JOBS) {
      const row = `tr[data-job-id="${ids.get(job.externalId)}"]`;
      expect(await page.textContent(`${row} [data-column="external-id"]`)).toBe(job.externalId);
      expect(await page.textContent(`${row} [data-column="submitted"]`)).toMatch(DATE_TIME);
      expect(await page.textContent(`${row} [data-column="finished"]`)).toMatch(DATE_TIME);
    }
    expect(await listCounter(page, 'shown')).toBe(JOBS.length);

    // Filter by one profile: only its jobs, and the counters follow the rows.
    const requested = page.waitForRequest((r) => r.url().includes('/v1/jobs?') && r.url().includes('profile=podcast'));
    await page.selectOption('#em-filter-profile', 'podcast');
    await requested;
    const podcastIds = JOBS.filter((j) => j.profile === 'podcast').map((j) => ids.get(j.externalId));
    await until(async () => (await rowsShown(page)).join() === podcastIds.join());
    await until(async () => (await listCounter(page, 'shown')) === podcastIds.length);
    const shown = await rowsShown(page);
    expect(shown).toEqual(podcastIds);
    const states = await page.$$eval('#em-jobs-body tr[data-job-id]', (rows) =>
      rows.map((row) => row.getAttribute('data-state') ?? ''),
    );
    for (const state of ['queued', 'active', 'completed', 'failed'])
      expect(await listCounter(page, state)).toBe(states.filter((s) => s === state).length);
    // The queue counters say they are not filtered.
    expect(await page.textContent('#em-counters-title')).toContain('do not apply');
    await page.screenshot({ path: join(OUTPUT_DIR, 'dashboard-profile-filter.png'), fullPage: true });

    // A key of another tenant reloads the list; the filter keeps a profile that tenant also has.
    await page.fill('#em-key', KEYS.beta);
    await page.click('#em-key-form button');
    await until(async () => (await rowsShown(page)).length === 0 && (await listCounter(page, 'shown')) === 0);
    expect(await page.inputValue('#em-filter-profile')).toBe('podcast');
    await page.close();
  });

  it('made no request outside the server', () => {
    expect(external).toEqual([]);
  });
});
