// Decompression and size bombs (fixtures/bombs.ts): each analysed in a child process of its own,
// whose peak RSS (process.resourceUsage().maxRSS, printed by the child) stays within 256 MiB,
// ending as a report or a typed error. Memory is asserted; time never is.
import { execFile, spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeBombs, type BombCase, type BombOutcome } from '../../fixtures/bombs.ts';
import { openAudioFile } from '../../src/decode/index.ts';
import { errorCatalogue } from '../../src/errors/index.ts';

const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const RSS_BOUND_MIB = 256;
// 15 minutes is the shortest that still shows every bomb: decoded whole, the 15-minute M4A alone
// is 346 MB of float; the 2-hour files of the report took 94 s to encode and up to 59 s to analyse.
const SECONDS = 900;
const hasFfmpeg = spawnSync('ffmpeg', ['-version']).status === 0;
const run = promisify(execFile);

let dir = '';
let cases: BombCase[] = [];
const figures: string[] = [];

async function analyzeInChild(path: string): Promise<BombOutcome> {
  const { stdout } = await run(process.execPath, ['bin/run.js', 'fixtures/bombs.ts', 'analyze', path], { cwd: ROOT, maxBuffer: 1 << 20 });
  return JSON.parse(stdout.trim().split('\n').pop() ?? '') as BombOutcome;
}

describe.skipIf(!hasFfmpeg)('bombs', () => {
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'earmark-bombs-'));
    cases = makeBombs(dir, SECONDS);
  }, 120_000);
  afterAll(() => {
    if (figures.length) console.log(`[bombs, ${SECONDS} s each, bound ${RSS_BOUND_MIB} MiB] ${figures.join('; ')}`);
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('covers every kind of bomb', () => {
    expect(cases.map((c) => c.id)).toEqual(['flac-max-frames', 'm4a-falsified-duration', 'm4a-index-last', 'opus-silence', 'vorbis-silence', 'wav-4gib-claim', 'rf64-4tib-claim', 'aiff-huge-claim']);
  });

  for (const id of ['flac-max-frames', 'm4a-falsified-duration', 'm4a-index-last', 'opus-silence', 'vorbis-silence', 'wav-4gib-claim', 'rf64-4tib-claim', 'aiff-huge-claim']) {
    it(`${id}: peak RSS within the bound, a report or a typed error`, async () => {
      const c = cases.find((k) => k.id === id)!;
      const o = await analyzeInChild(c.path);
      figures.push(`${id} ${o.kind} ${o.maxRssMib.toFixed(1)} MiB`);
      expect(o.kind, o.message).toBe(c.expected);
      if (o.kind.startsWith('error:')) expect(Object.keys(errorCatalogue)).toContain(o.kind.slice(6));
      expect(o.maxRssMib).toBeLessThanOrEqual(RSS_BOUND_MIB);
    }, 120_000);
  }

  it('the decoded-duration cap stops a stream while decoding (compressed and PCM)', async () => {
    for (const id of ['opus-silence', 'wav-4gib-claim']) {
      const d = await openAudioFile(cases.find((k) => k.id === id)!.path, { maxDecodedSeconds: 0.05 });
      let frames = 0;
      const drained = (async () => { for await (const b of d.blocks) frames += b.frames; })();
      await expect(drained, id).rejects.toMatchObject({ code: 'decoded_size_exceeded' });
      // Stopped within one output (block or decoder call) of the cap, not at the end of the file.
      expect(frames, id).toBeLessThan(48000 * 60);
    }
  }, 60_000);
});
