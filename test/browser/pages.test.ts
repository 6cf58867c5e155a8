// The dashboard and report pages in a real browser: Debian's Chromium driven by playwright-core
// (never a downloaded browser), against a running API and worker on real Redis.
// Screenshots go to test-output/ (git-ignored).
import { mkdirSync, mkdtempSync } from 'node:fs';
import { stat, truncate, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openAudioFile } from '../../src/decode/index.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { programmeBlocks, toneBlocks } from '../../src/selftest/signals.ts';
import { client } from '../service/client.ts';
import { KEYS, startService, until, type TestService } from '../service/harness.ts';
import { writeSine } from '../service/audio.ts';
import { flagCountsText } from '../../src/views/assets/format.js';
import { renderReportPlot } from '../../src/views/report-plot.ts';
import { sampleReport } from '../views/sample-report.ts';
import { hasTool } from '../helpers/tools.ts';

const CHROMIUM = '/usr/bin/chromium';
/** The little of the page's DOM the tests touch (the Node tsconfig has no DOM types). */
interface PageGlobals {
  document: { getElementById(id: string): { src: string } };
  getComputedStyle(node: unknown): { getPropertyValue(name: string): string };
}
const OUTPUT_DIR = join(process.cwd(), 'test-output');
const SAMPLE_RATE = 48000;
const dir = mkdtempSync(join(tmpdir(), 'earmark-browser-'));

/** 20 s of programme with full-scale clipping runs at 5 s (left) and 12 s (right). */
async function writeClippedProgramme(path: string): Promise<void> {
  const clipAt = [
    { channel: 0, frame: 5 * SAMPLE_RATE, value: 1 },
    { channel: 1, frame: 12 * SAMPLE_RATE, value: -1 },
  ];
  let position = 0;
  const blocks = (function* () {
    for (const block of programmeBlocks({
      sampleRate: SAMPLE_RATE,
      channels: 2,
      seconds: 20,
      seed: 42,
      levelDbfs: -20,
    })) {
      const data = block.channelData.map((x) => Float32Array.from(x));
      for (const clip of clipAt) {
        for (let n = clip.frame; n < clip.frame + 24; n++)
          if (n >= position && n < position + block.frames) data[clip.channel][n - position] = clip.value;
      }
      position += block.frames;
      yield data;
    }
  })();
  // 16-bit keeps it under the test service's 5 MB upload limit.
  await writeWavFile(path, { sampleRate: SAMPLE_RATE, channels: 2, bitsPerSample: 16, float: false }, blocks);
}

describe.skipIf(!hasTool('chromium'))('pages in Chromium', () => {
  let service: TestService;
  let browser: Browser;
  const external: string[] = [];

  async function openPage(
    path: string,
    viewport = { width: 1280, height: 800 },
    prepare?: (page: Page) => Promise<void>,
  ): Promise<Page> {
    const page = await browser.newPage({ viewport });
    page.on('pageerror', (error) => console.error('pageerror', error.message));
    await prepare?.(page);
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
      args: [
        '--headless',
        '--no-sandbox',
        '--disable-gpu',
        '--disable-background-networking',
        '--disable-component-update',
        '--disable-sync',
        '--no-first-run',
      ],
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
    // The report's first line rides along in the row.
    const job = (await client(service.url).get(`/v1/jobs/${submitted.body.id}`, KEYS.alpha)).body;
    expect(job.headline).toEqual(expect.any(String));
    expect(await page.textContent(`${row} .em-row-headline`)).toBe(job.headline);
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
    const finished = await until(async () => {
      const job = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body;
      return job.state === 'completed' || job.state === 'failed' ? job : null;
    });
    expect(finished.error).toBeNull();
    const report = (await api.get(`/v1/jobs/${id}/report`, KEYS.alpha)).body;
    expect(report.flags.length).toBeGreaterThan(0);

    const page = await openPage(`/jobs/${id}`);
    await page.waitForSelector('.em-plot');
    expect((await page.textContent('#em-verdict'))?.trim()).toBe(report.verdict.toUpperCase());
    expect(await page.locator('.em-plot .em-flag').count()).toBe(report.flags.length);
    expect(await page.locator('#em-flags .em-flag-go').count()).toBe(report.flags.length);
    expect(await page.locator('#em-checks-body tr').count()).toBe(report.checks.length);
    expect(await page.textContent('#em-flag-counts')).toBe(flagCountsText(report));
    // Open every group of a repeating kind, so each flag's row shows.
    for (const toggle of await page.locator('#em-flags .em-group-toggle').all()) await toggle.click();
    const first = await page.innerText('#em-flags tr[data-flag-index="0"]');
    for (const part of [
      `#${report.flags[0].number}`,
      report.flags[0].severity.toUpperCase(),
      report.flags[0].title,
      report.flags[0].startTimecode,
      report.flags[0].endTimecode,
      report.flags[0].channelName,
    ])
      expect(first).toContain(part);

    // Click the last flag: the cursor becomes visible at that flag's time.
    const last = report.flags.length - 1;
    await page.locator(`#em-flags tr[data-flag-index="${last}"] .em-flag-go`).click();
    const cursor = page.locator('#em-plot-cursor');
    expect(await cursor.getAttribute('visibility')).toBe('visible');
    const [left, width, duration, x] = await Promise.all(
      ['data-plot-left', 'data-plot-width', 'data-duration', 'x1'].map((a) => cursor.getAttribute(a)),
    );
    const expectedX = Number(left) + (report.flags[last].startSeconds / Number(duration)) * Number(width);
    expect(Number(x)).toBeCloseTo(expectedX, 3);
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-1280x800.png'), fullPage: true });

    // Keyboard: focus the first flag's button and press Enter.
    await page.locator('#em-flags tr[data-flag-index="0"] .em-flag-go').focus();
    await page.keyboard.press('Enter');
    expect(await cursor.getAttribute('data-flag-index')).toBe('0');

    // Listen: the page loads an excerpt into the player, with the level caution beside it.
    expect(await page.textContent('.em-caution')).toMatch(/playback level down/);
    await page.locator('#em-flags tr[data-flag-index="0"] .em-listen').click();
    await page.waitForFunction(() =>
      (globalThis as unknown as PageGlobals).document.getElementById('em-player').src.startsWith('blob:'),
    );
    await page.setViewportSize({ width: 390, height: 844 });
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-narrow.png'), fullPage: true });
    await page.close();

    // The excerpt endpoint itself: a WAV of the requested span that our decoder (and a browser) can play.
    const flag = report.flags[0];
    const start = Math.max(0, flag.startSeconds - 1);
    const excerpt = await api.checked(
      (await import('supertest'))
        .default(service.url)
        .get(`/v1/jobs/${id}/excerpt?startSeconds=${start}&endSeconds=${start + 3}`)
        .set('authorization', `Bearer ${KEYS.alpha}`)
        .buffer(true)
        .parse((res, done) => {
          const chunks: Buffer[] = [];
          res.on('data', (c: Buffer) => chunks.push(c));
          res.on('end', () => done(null, Buffer.concat(chunks)));
        }),
    );
    expect(excerpt.status).toBe(200);
    expect(excerpt.headers['content-type']).toBe('audio/wav');
    const excerptPath = join(dir, 'excerpt.wav');
    await writeFile(excerptPath, excerpt.body as Buffer);
    const decoded = await openAudioFile(excerptPath);
    expect(decoded.format).toMatchObject({
      container: 'wav',
      sampleRate: SAMPLE_RATE,
      channels: 2,
      frames: 3 * SAMPLE_RATE,
    });
  });

  it('report page of a damaged file (made-up v2 report): headline first, integrity panel next; remarks, counts and a marginal check', async () => {
    const id = 'j_sampleversiontworeport00';
    const report = sampleReport();
    const job = {
      id,
      state: 'completed',
      progressPercent: 100,
      verdict: report.verdict,
      headline: report.headline,
      error: null,
    };
    // The API's answers for a made-up job, served inside the browser: every report-v2 field's
    // rendering is checked without needing one file that produces all of them.
    const page = await openPage(`/jobs/${id}`, undefined, async (p) => {
      await p.route(
        (url) => url.pathname.startsWith(`/v1/jobs/${id}`),
        (route) => {
          const path = new URL(route.request().url()).pathname;
          if (path.endsWith('/plot.svg'))
            return route.fulfill({ contentType: 'image/svg+xml', body: renderReportPlot(report) });
          return route.fulfill({
            contentType: 'application/json',
            body: JSON.stringify(path.endsWith('/report') ? report : job),
          });
        },
      );
    });
    await page.waitForSelector('#em-report-body:not([hidden]) .em-plot');

    // The first line a reader sees is the headline, the next the integrity problem, both above the readings.
    const lines = (await page.innerText('main'))
      .split('\n')
      .map((l) => l.trim())
      .filter(Boolean);
    expect(lines[0]).toBe(`FAIL ${report.headline}`);
    expect(lines[1]).toBe('Damaged file: this fails the report');
    expect(await page.getAttribute('#em-headline', 'class')).toContain('em-headline-fail');
    const top = async (selector: string) => (await page.locator(selector).boundingBox())?.y ?? Number.NaN;
    expect(await top('#em-headline')).toBeLessThan(await top('#em-integrity'));
    expect(await top('#em-integrity')).toBeLessThan(await top('#em-file'));
    const problem = page.locator('#em-integrity-problems li');
    expect(await problem.count()).toBe(1);
    expect(await problem.textContent()).toContain('00:00:05:00');
    expect(await problem.textContent()).toContain('720000 frames missing');

    // The head strip: each channel's tone, the pop and the programme start, and the same in words.
    expect(await page.locator('#em-head-section:not([hidden]) svg .em-head-tone').count()).toBe(2);
    expect(await page.textContent('#em-head-facts')).toContain('Programme starts at 00:00:04:00');

    // Counts, then every flag with number, severity, title, start, end, channel, count and worst value.
    expect(await page.textContent('#em-flag-counts')).toBe('1 fail · 1 warn · 2 remarks');
    expect(await page.locator('#em-flags tr.em-flag-item[data-severity]').count()).toBe(4);
    const remarks = page.locator('#em-flags tr.em-flag-item[data-severity="remark"]');
    expect(await remarks.count()).toBe(2);
    const cellsOf = async (row: ReturnType<Page['locator']>) =>
      (await row.locator('td').allInnerTexts()).map((t) => t.replace(/\s+/g, ' ').trim());
    const dropout = await cellsOf(remarks.nth(1));
    expect(dropout[0]).toContain('#4');
    expect(dropout[0]).toContain('Dropout');
    expect(dropout[0]).toContain('37 very short dropouts');
    // A dropout with no level is digital zero (analysis/events.ts): said so, not a dash.
    expect(dropout.slice(1, 9)).toEqual([
      'REMARK',
      '00:00:03:00 3.000 s',
      '00:00:04:05 4.200 s',
      '1.200 s',
      '37',
      'digital silence',
      '2 R',
      'none',
    ]);
    expect((await cellsOf(remarks.nth(0)))[6]).toBe('-38.1 dBFS');
    const warn = await cellsOf(page.locator('#em-flags tr.em-flag-item[data-severity="warn"]'));
    expect(warn.slice(5, 9)).toEqual(['3', '-0.4 dBTP', '1 L', 'true-peak']);
    // A remark has its own, quieter look: a dotted edge where a fail has a solid one, an outlined label.
    const style = (selector: string, property: string) =>
      page
        .locator(selector)
        .first()
        .evaluate(
          (node, name) => (globalThis as unknown as PageGlobals).getComputedStyle(node).getPropertyValue(name),
          property,
        );
    expect(await style('#em-flags tr[data-severity="remark"] td', 'border-left-style')).toBe('dotted');
    expect(await style('#em-flags tr[data-severity="fail"] td', 'border-left-style')).toBe('solid');
    expect(await style('.em-sev-badge-remark', 'background-color')).toBe('rgba(0, 0, 0, 0)');
    expect(await style('.em-sev-badge-fail', 'background-color')).not.toBe('rgba(0, 0, 0, 0)');
    // Text alternatives: the message describes the flag's button; Listen names its flag.
    const go = page.locator('#em-flags tr[data-severity="remark"] .em-flag-go').nth(1);
    expect(await page.textContent(`#${await go.getAttribute('aria-describedby')}`)).toBe(
      '37 very short dropouts on channel 2 R.',
    );
    expect(await page.getAttribute('#em-flags tr[data-flag-index="3"] .em-listen', 'aria-label')).toBe(
      'Listen to flag #4, Dropout, at 00:00:03:00',
    );

    // The plot: one marker per flag, the remarks fainter.
    expect(await page.locator('.em-plot .em-flag').count()).toBe(4);
    expect(await page.locator('.em-plot .em-flag[opacity="0.45"]').count()).toBe(2);
    // Keyboard: a remark's button moves the cursor to it.
    await go.focus();
    await page.keyboard.press('Enter');
    expect(await page.getAttribute('#em-plot-cursor', 'data-flag-index')).toBe('3');
    expect(await page.textContent('#em-cursor-status')).toBe('Cursor at 00:00:03:00: #4 Dropout (remark)');

    // A marginal check reads "marginal", in the warn style, not "not met".
    const marginal = page.locator('#em-checks-body tr[data-rule-id="true-peak"] td').last();
    expect(await marginal.textContent()).toBe('marginal');
    expect(await marginal.getAttribute('class')).toContain('em-outcome-marginal');
    expect(await page.textContent('.em-caution')).toMatch(/playback level down/);
    expect(await page.locator('.em-caution').isVisible()).toBe(true);
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-damaged-1280x800.png'), fullPage: true });
    await page.setViewportSize({ width: 390, height: 844 });
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-damaged-narrow.png'), fullPage: true });
    await page.close();
  });

  it('a failed job: the report page says what failed and what to do; the dashboard row says why', async () => {
    const junk = join(dir, 'meeting-notes.wav');
    await writeFile(junk, 'Agenda: levels, deliveries, holidays.\n'.repeat(40));
    const api = client(service.url);
    const submitted = await api.upload(junk, { profile: 'podcast' }, KEYS.alpha);
    expect(submitted.status).toBe(202);
    const id = submitted.body.id as string;
    const failed = await until(async () => {
      const job = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body;
      return job.state === 'failed' ? job : null;
    });
    expect(failed.error.code).toBe('unsupported_format');

    const page = await openPage(`/jobs/${id}`);
    await page.waitForSelector('#em-job-failed:not([hidden])');
    expect(await page.textContent('#em-headline')).toContain(`Analysis failed: ${failed.error.message}`);
    expect(await page.textContent('#em-failure-code')).toBe('unsupported_format');
    expect(await page.textContent('#em-failure-message')).toContain('meeting-notes.wav');
    expect(await page.textContent('#em-failure-hint')).toMatch(/^Re-export the audio as WAV or FLAC/);
    expect(await page.innerText('#em-failure-job')).toContain('meeting-notes.wav');
    expect(await page.locator('#em-report-body').isHidden()).toBe(true);
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-failed-job.png'), fullPage: true });
    await page.close();

    const dashboard = await openPage('/');
    const row = `tr[data-job-id="${id}"][data-state="failed"]`;
    await dashboard.waitForSelector(row);
    expect(await dashboard.textContent(`${row} .em-row-headline`)).toBe(failed.error.message);
    await dashboard.close();
  });

  it('a file cut short: its dashboard row shows the headline, its report page opens with the integrity problem', async () => {
    const wav = await writeSine(join(dir, 'interview-cut.wav'), -23, 20);
    // 24-bit stereo: drop the last 15 s of sample bytes, leaving the header's declared length.
    await truncate(wav, (await stat(wav)).size - 15 * SAMPLE_RATE * 2 * 3);
    const api = client(service.url);
    const submitted = await api.upload(wav, { profile: 'ebu-r128' }, KEYS.alpha);
    expect(submitted.status).toBe(202);
    const id = submitted.body.id as string;
    const job = await until(async () => {
      const j = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body;
      return j.state === 'completed' || j.state === 'failed' ? j : null;
    });
    expect(job).toMatchObject({ state: 'completed', verdict: 'fail', headline: expect.any(String) });
    const report = (await api.get(`/v1/jobs/${id}/report`, KEYS.alpha)).body;
    expect(report.integrity.intact).toBe(false);

    const dashboard = await openPage('/');
    const row = `tr[data-job-id="${id}"][data-state="completed"]`;
    await dashboard.waitForSelector(row);
    expect(await dashboard.textContent(`${row} .em-row-headline`)).toBe(job.headline);
    expect(await dashboard.locator(`${row} .em-row-headline`).isVisible()).toBe(true);
    await dashboard.screenshot({ path: join(OUTPUT_DIR, 'dashboard-damaged-row.png'), fullPage: true });
    await dashboard.close();

    const page = await openPage(`/jobs/${id}`);
    await page.waitForSelector('#em-report-body:not([hidden])');
    const lines = (await page.innerText('main'))
      .split('\n')
      .map((l) => l.trim())
      .filter(Boolean);
    expect(lines[0]).toBe(report.headline);
    expect(lines[1]).toMatch(/^Damaged file/);
    const problems = await page.innerText('#em-integrity-problems');
    for (const problem of report.integrity.problems) expect(problems).toContain(problem.atTimecode);
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-cut-file.png'), fullPage: true });
    await page.close();
  });

  it('a file that declares its loudness in bext v2: the report page puts each figure beside the reading', async () => {
    // Stereo 1 kHz at -20 dBFS peak reads -20.0 LUFS (EBU Tech 3341 Table 1 case 1 style); it declares -23.00.
    const wav = join(dir, 'declared.wav');
    const blocks = [...toneBlocks({ sampleRate: SAMPLE_RATE, channels: 2, segments: [{ seconds: 5, peakDbfs: -20 }] })];
    await writeWavFile(
      wav,
      {
        sampleRate: SAMPLE_RATE,
        channels: 2,
        bitsPerSample: 16,
        float: false,
        bextLoudness: { integratedLufs: -23, maxTruePeakDbtp: -20 },
      },
      blocks.map((b) => [...b.channelData]),
    );
    const api = client(service.url);
    const submitted = await api.upload(wav, { profile: 'ebu-r128' }, KEYS.alpha);
    const id = submitted.body.id as string;
    await until(async () => {
      const j = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body;
      return j.state === 'completed' || j.state === 'failed' ? j : null;
    });
    const page = await openPage(`/jobs/${id}`);
    await page.waitForSelector('#em-declared:not([hidden])');
    const rows = await page.locator('#em-declared-body tr').allInnerTexts();
    expect(rows.map((r) => r.split('\t').map((c) => c.trim()))).toEqual([
      ['BWF bext', 'Integrated loudness', '-23.00 LUFS', '-20.0 LUFS', '+3.0 LU'],
      ['BWF bext', 'Max true peak', '-20.00 dBTP', '-20.0 dBTP', '0.0 dB'],
    ]);
    // No rule of ebu-r128 judges it: the 3 LU difference is a remark the note points at.
    expect(await page.textContent('#em-declared-note')).toMatch(
      /^1 declared figure differs from the reading: see flag #\d+\.$/,
    );
    await page.screenshot({ path: join(OUTPUT_DIR, 'report-declared-loudness.png'), fullPage: true });
    await page.close();
  });

  it('report page of a profile with a mono rule: the fold-down card with the mono sum, its loss and each channel', async () => {
    const api = client(service.url);
    const profile = {
      name: 'Fold-down card',
      version: '0.0.1',
      description: 'Invented house rule for the tests',
      basis: 'house rule',
      downmix: { channelLoudness: true },
      rules: [{ id: 'mono', type: 'mono-compatibility', severity: 'warn', maxLossLu: 3 }],
    };
    expect((await api.put('/v1/profiles/fold-down-card', profile, KEYS.alphaAdmin)).status).toBe(200);
    const wav = await writeSine(join(dir, 'jingle-dual-mono.wav'), -20, 4);
    const submitted = await api.upload(wav, { profile: 'fold-down-card' }, KEYS.alpha);
    expect(submitted.status).toBe(202);
    const id = submitted.body.id as string;
    await until(async () => {
      const job = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body;
      return job.state === 'completed' ? job : null;
    });
    const page = await openPage(`/jobs/${id}`);
    await page.waitForSelector('#em-downmix:not([hidden])');
    // Identical L and R: the mono sum L + R reads 3.01 LU above the stereo pair (closed form).
    expect(await page.textContent('#em-downmix-metrics')).toContain('-3.0 LU');
    expect(await page.locator('#em-channel-loudness-body tr').count()).toBe(2);
    expect(await page.isVisible('#em-channel-loudness')).toBe(true);
    await page.close();
  });

  it('made no request outside the server', () => {
    expect(external).toEqual([]);
  });
});
