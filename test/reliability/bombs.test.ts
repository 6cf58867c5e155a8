// Decompression and size bombs (fixtures/bombs.ts): each analysed in a child process of its own,
// whose peak RSS (process.resourceUsage().maxRSS, printed by the child) stays within 256 MiB,
// ending as a report or a typed error. Memory is asserted; time never is.
import { execFile } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeBombs, type BombCase, type BombOutcome } from '../../fixtures/bombs.ts';
import { childPids } from '../../fixtures/procs.ts';
import { seedSamples, wavBytes } from '../../fixtures/seeds.ts';
import { openAudioFile } from '../../src/decode/index.ts';
import { errorCatalogue } from '../../src/errors/index.ts';
import { KEYS, startService, until } from '../service/harness.ts';
import { hasTool } from '../helpers/tools.ts';

const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const RSS_BOUND_MIB = 256;
// 15 minutes is the shortest that still shows every bomb: decoded whole, the 15-minute M4A alone
// is 346 MB of float; the 2-hour files of the report took 94 s to encode and up to 59 s to analyse.
const SECONDS = 900;
const hasFfmpeg = hasTool('ffmpeg');
const run = promisify(execFile);

let dir = '';
let cases: BombCase[] = [];
const figures: string[] = [];

async function analyzeInChild(path: string): Promise<BombOutcome> {
  const { stdout } = await run(process.execPath, ['bin/run.js', 'fixtures/bombs.ts', 'analyze', path], {
    cwd: ROOT,
    maxBuffer: 1 << 20,
  });
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
    expect(cases.map((c) => c.id)).toEqual([
      'flac-max-frames',
      'm4a-falsified-duration',
      'm4a-index-last',
      'opus-silence',
      'vorbis-silence',
      'webm-opus-silence',
      'mp3-silence',
      'adts-silence',
      'wav-4gib-claim',
      'rf64-4tib-claim',
      'aiff-huge-claim',
    ]);
  });

  for (const id of [
    'flac-max-frames',
    'm4a-falsified-duration',
    'm4a-index-last',
    'opus-silence',
    'vorbis-silence',
    'webm-opus-silence',
    'mp3-silence',
    'adts-silence',
    'wav-4gib-claim',
    'rf64-4tib-claim',
    'aiff-huge-claim',
  ]) {
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
      const drained = (async () => {
        for await (const b of d.blocks) frames += b.frames;
      })();
      await expect(drained, id).rejects.toMatchObject({ code: 'decoded_size_exceeded' });
      // Stopped within one output (block or decoder call) of the cap, not at the end of the file.
      expect(frames, id).toBeLessThan(48000 * 60);
    }
  }, 60_000);
});

// Needs the tests' Redis, as the service tests do. The limit's floor (64 MiB) is below any
// child's RSS, so every job retires its child: the result must still arrive, from a fresh child each time.
describe('an analysis child above its RSS limit after a job', () => {
  it('delivers the job result, then exits and is replaced for the next job', async () => {
    const service = await startService({ worker: true, env: { EARMARK_CHILD_RSS_LIMIT_MB: '64' } });
    try {
      const file = new Blob([wavBytes(seedSamples(1))], { type: 'audio/wav' });
      const seen: number[] = [];
      for (let i = 0; i < 2; i++) {
        const form = new FormData();
        form.set('profile', 'ebu-r128');
        form.set('file', file, `short-${i}.wav`);
        const auth = { authorization: `Bearer ${KEYS.alpha}` };
        const res = await fetch(`${service.url}/v1/jobs`, { method: 'POST', headers: auth, body: form });
        expect(res.status).toBe(202);
        const { id } = (await res.json()) as { id: string };
        let child: number[] = [];
        const view = await until(async () => {
          child = child.length ? child : childPids(process.pid);
          const body = (await (await fetch(`${service.url}/v1/jobs/${id}`, { headers: auth })).json()) as {
            state: string;
            verdict: string | null;
            attempts?: unknown;
          };
          return body.state === 'completed' || body.state === 'failed' ? body : null;
        }, 50);
        expect(view.state).toBe('completed');
        expect(view.verdict).not.toBeNull();
        seen.push(...child);
        // The child that ran the job goes away once its result is delivered.
        await until(async () => childPids(process.pid).length === 0, 50);
      }
      expect(seen.length).toBe(2);
      expect(new Set(seen).size).toBe(2);
    } finally {
      await service.close();
    }
  }, 120_000);
});
