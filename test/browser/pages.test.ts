// The dashboard and report pages in a real browser: Debian's Chromium driven by playwright-core
// (never a downloaded browser), against a running API and worker on real Redis.
// Screenshots go to test-output/ (git-ignored).
import { existsSync, mkdirSync, mkdtempSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openAudioFile } from '../../src/decode/index.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';
import { client } from '../service/client.ts';
import { KEYS, startService, until, type TestService } from '../service/harness.ts';
import { writeSine } from '../service/audio.ts';

const CHROMIUM = '/usr/bin/chromium';
/** The little of the page's DOM the tests touch (the Node tsconfig has no DOM types). */
interface PageGlobals { document: { getElementById(id: string): { src: string } } }
const OUTPUT_DIR = join(process.cwd(), 'test-output');
const SAMPLE_RATE = 48000;
const dir = mkdtempSync(join(tmpdir(), 'earmark-browser-'));

/** 20 s of programme with full-scale clipping runs at 5 s (left) and 12 s (right). */
async function writeClippedProgramme(path: string): Promise<void> {
  const clipAt = [{ channel: 0, frame: 5 * SAMPLE_RATE, value: 1 }, { channel: 1, frame: 12 * SAMPLE_RATE, value: -1 }];
  let position = 0;
  const blocks = (function* () {
    for (const block of programmeBlocks({ sampleRate: SAMPLE_RATE, channels: 2, seconds: 20, seed: 42, levelDbfs: -20 })) {
      const data = block.channelData.map((x) => Float32Array.from(x));
      for (const clip of clipAt) {
        for (let n = clip.frame; n < clip.frame + 24; n++) if (n >= position && n < position + block.frames) data[clip.channel][n - position] = clip.value;
      }
      position += block.frames;
      yield data;
    }
  })();
  // 16-bit keeps it under the test service's 5 MB upload limit.
  await writeWavFile(path, { sampleRate: SAMPLE_RATE, channels: 2, bitsPerSample: 16, float: false }, blocks);
}

describe.skipIf(!existsSync(CHROMIUM))('pages in Chromium', () => {
  let service: TestService;
  let browser: Browser;
  const external: string[] = [];

  async function openPage(path: string, viewport = { width: 1280, height: 800 }): Promise<Page> {
    const page = await browser.newPage({ viewport });
    page.on('pageerror', (error) => console.error('pageerror', error.message));
    page.on('request', (request) => {
      const url = request.url();
      if (!url.startsWith(service.url) && !url.startsWith('blob:') && !url.startsWith('data:')) external.push(url);
    });
    await page.goto(`${service.url}${path}`);
    await page.fill('#em-key', KEYS.alpha);
    await page.click('#em-key-form button');
    return page;
  }

  beforeAll(async () => {
    mkdirSync(OUTPUT_DIR, { recursive: true });
    service = await startService();
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'],
    });
  });

  afterAll(async () => {
    await browser?.close();
    await service?.close();
  });

  it('dashboard shows a job that completes while the page is open, without a reload', async () => {
    const page = await openPage('/');
    await page.waitForSelector('[data-counter="completed"]');
    await page.evaluate('window.keptAcrossUpdates = 1');
    const wav = await writeSine(join(dir, 'station-ident.wav'), -23, 6);
    const submitted = await client(service.url).upload(wav, { profile: 'ebu-r128' }, KEYS.alpha);
    expect(submitted.status).toBe(202);
    const row = `tr[data-job-id="${submitted.body.id}"][data-state="completed"]`;
    await page.waitForSelector(row, { timeout: 60_000 });
    expect(await page.textContent(row)).toContain('PASS');
    expect(await page.textContent(row)).toContain('-23.0 LUFS');
    // Same document: the marker set before the job existed is still there.
    expect(await page.evaluate('window.keptAcrossUpdates')).toBe(1);
    await page.screenshot({ path: join(OUTPUT_DIR, 'dashboard-1280x800.png'), fullPage: true });
    await page.setViewportSize({ width: 390, height: 844 });
    await page.screenshot({ path: join(OUTPUT_DIR, 'dashboard-narrow.png'), fullPage: true });
    await page.close();
  });

  it('report page: verdict, one marker per flag, a flag click moves the cursor, keyboard works, excerpt plays', async () => {
    const wav = join(dir, 'harbour-promo-hot.wav');
    await writeClippedProgramme(wav);
    const api = client(service.url);
    const submitted = await api.upload(wav, { profile: 'podcast' }, KEYS.alpha);
    expect(submitted.status).toBe(202);
    const id = submitted.body.id as string;
    const finished = await until(async () => { const job = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body; return job.state === 'completed' || job.state === 'failed' ? job : null; });
    expect(finished.error).toBeNull();
    const report = (await api.get(`/v1/jobs/${id}/report`, KEYS.alpha)).body;
    expect(report.flags.length).toBeGreaterThan(0);

    const page = await openPage(`/jobs/${id}`);
    await page.waitForSelector('.em-plot');
    expect((await page.textContent('#em-verdict'))?.trim()).toBe(report.verdict.toUpperCase());
    expect(await page.locator('.em-plot .em-flag').count()).toBe(report.flags.length);
    expect(await page.locator('#em-flags .em-flag-go').count()).toBe(report.flags.length);
    expect(await page.locator('#em-checks-body tr').count()).toBe(report.checks.length);

    // Click the last flag: the cursor becomes visible at that flag's time.
    const last = report.flags.length - 1;
    await page.locator('#em-flags .em-flag-go').nth(last).click();
    const cursor = page.locator('#em-plot-cursor');
    expect(await cursor.getAttribute('visibility')).toBe('visible');
    const [left, width, duration, x] = await Promise.all(['data-plot-left', 'data-plot-width', 'data-duration', 'x1'].map((a) => cursor.getAttribute(a)));
    const expectedX = Number(left) + (report.flags[last].startSeconds / Number(duration)) * Number(width);
    expect(Number(x)).toBeCloseTo(expectedX, 3);
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-1280x800.png'), fullPage: true });

    // Keyboard: focus the first flag button and press Enter.
    await page.locator('#em-flags .em-flag-go').first().focus();
    await page.keyboard.press('Enter');
    expect(await cursor.getAttribute('data-flag-index')).toBe('0');

    // Listen: the page loads an excerpt into the player, with the level caution beside it.
    expect(await page.textContent('.em-caution')).toMatch(/playback level down/);
    await page.locator('#em-flags .em-listen').first().click();
    await page.waitForFunction(() => (globalThis as unknown as PageGlobals).document.getElementById('em-player').src.startsWith('blob:'));
    await page.setViewportSize({ width: 390, height: 844 });
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-narrow.png'), fullPage: true });
    await page.close();

    // The excerpt endpoint itself: a WAV of the requested span that our decoder (and a browser) can play.
    const flag = report.flags[0];
    const start = Math.max(0, flag.startSeconds - 1);
    const excerpt = await api.checked((await import('supertest')).default(service.url)
      .get(`/v1/jobs/${id}/excerpt?startSeconds=${start}&endSeconds=${start + 3}`).set('authorization', `Bearer ${KEYS.alpha}`)
      .buffer(true).parse((res, done) => { const chunks: Buffer[] = []; res.on('data', (c: Buffer) => chunks.push(c)); res.on('end', () => done(null, Buffer.concat(chunks))); }));
    expect(excerpt.status).toBe(200);
    expect(excerpt.headers['content-type']).toBe('audio/wav');
    const excerptPath = join(dir, 'excerpt.wav');
    await writeFile(excerptPath, excerpt.body as Buffer);
    const decoded = await openAudioFile(excerptPath);
    expect(decoded.format).toMatchObject({ container: 'wav', sampleRate: SAMPLE_RATE, channels: 2, frames: 3 * SAMPLE_RATE });
  });

  it('made no request outside the server', () => {
    expect(external).toEqual([]);
  });
});
