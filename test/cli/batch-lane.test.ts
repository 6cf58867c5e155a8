// The batch's reused children (src/cli/batch-lane.ts, batch-child.ts): a file checked in a lane's
// child gives the summary checkOneFile gives alone; a file that crashes, hangs or spins the child
// is that file's internal_error and the next file gets a fresh child; no child outlives the batch,
// its parent's SIGTERM, or its parent's death.
import { spawn, spawnSync } from 'node:child_process';
import { readdirSync, readFileSync, renameSync } from 'node:fs';
import { join } from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { LANE_FAULT_ENV } from '../../src/cli/batch-child.ts';
import { runBatch, type BatchResult } from '../../src/cli/batch.ts';
import { checkOneFile } from '../../src/cli/check-one.ts';
import { summarise } from '../../src/exports/junit.ts';
import { resolveProfile } from '../../src/profiles/index.ts';
import { hasTool } from '../helpers/tools.ts';
import { setRange, tempDir, writeTone } from '../profiles/helpers.ts';

const ROOT = join(import.meta.dirname, '..', '..');
const { dir, cleanup } = tempDir();
const files: string[] = [];
const named = (name: string) => files.find((f) => f.endsWith(name)) ?? '';

beforeAll(async () => {
  const place = async (name: string, made: Promise<string>) => {
    const path = join(dir, name);
    renameSync(await made, path);
    files.push(path);
  };
  // EBU Tech 3341 case 1 style: a stereo 1 kHz sine at -23 dBFS peak reads -23.0 LUFS.
  await place('a-on-target.wav', writeTone(dir, { segments: [{ seconds: 3, peakDbfs: -23 }] }));
  await place(
    'b-loud-clipped.wav',
    writeTone(dir, { segments: [{ seconds: 3, peakDbfs: -12 }], edit: setRange(48_000, 48_010, 0.999) }),
  );
  await place('c-quiet-24.wav', writeTone(dir, { segments: [{ seconds: 3, peakDbfs: -40 }], bitsPerSample: 24 }));
  if (hasTool('ffmpeg')) {
    // Compressed copies, two of one codec, so a child's decoder state from one file meets the next.
    for (const [name, codec] of [
      ['d-loud.flac', ['-c:a', 'flac']],
      ['e-loud.mp3', ['-c:a', 'libmp3lame', '-b:a', '192k']],
      ['f-on-target.mp3', ['-c:a', 'libmp3lame', '-b:a', '128k']],
    ] as const) {
      const source = name.includes('loud') ? named('b-loud-clipped.wav') : named('a-on-target.wav');
      const out = join(dir, name);
      const made = spawnSync('ffmpeg', ['-nostdin', '-v', 'error', '-y', '-i', source, ...codec, out]);
      expect(made.status).toBe(0);
      files.push(out);
    }
  }
}, 60_000);
afterAll(cleanup);
afterEach(() => {
  delete process.env[LANE_FAULT_ENV];
});

/** Live processes whose parent is `pid` (Linux /proc). */
function childrenOf(pid: number): number[] {
  const found: number[] = [];
  for (const entry of readdirSync('/proc')) {
    if (!/^\d+$/.test(entry)) continue;
    try {
      // Field 4 of /proc/<pid>/stat is the parent; the name in field 2 may hold spaces, so read after ')'.
      const stat = readFileSync(`/proc/${entry}/stat`, 'utf8');
      const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
      if (Number(fields[1]) === pid && fields[0] !== 'Z') found.push(Number(entry));
    } catch {
      // gone meanwhile
    }
  }
  return found;
}
const isBatchChild = (pid: number) => {
  try {
    return readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('batch-child');
  } catch {
    return false;
  }
};
const batchChildrenOf = (pid: number) => childrenOf(pid).filter(isBatchChild);

async function waitFor(condition: () => boolean, timeoutMs: number): Promise<boolean> {
  const until = Date.now() + timeoutMs;
  while (Date.now() < until) {
    if (condition()) return true;
    await sleep(50);
  }
  return condition();
}

const options = { profile: 'ebu-r128', threads: '1', jobs: 2 };
const codeOf = (r: BatchResult) => ('error' in r ? r.error.code : r.report.verdict);

describe('a batch lane reuses its child', () => {
  it('gives each file the summary checkOneFile gives it alone', async () => {
    // One child per lane for the whole batch: the children seen after each file are the same two.
    const seen = new Set<number>();
    const results = await runBatch(files, {
      ...options,
      onDone: () => {
        for (const pid of batchChildrenOf(process.pid)) seen.add(pid);
      },
    });
    expect(seen.size).toBe(2);
    const profile = await resolveProfile('ebu-r128');
    for (const [i, file] of files.entries()) {
      // The summary crosses the IPC channel as JSON, as the report crossed stdout before.
      const alone = JSON.parse(JSON.stringify(summarise(await checkOneFile(file, profile, { threads: 1 }))));
      expect(results[i]).toEqual({ file, report: alone });
    }
    expect(results.map(codeOf).slice(0, 3)).toEqual(['pass', 'fail', 'fail']);
    expect(batchChildrenOf(process.pid)).toEqual([]);
  }, 120_000);

  it('a file that crashes the child is an internal_error naming the signal; the rest still pass', async () => {
    process.env[LANE_FAULT_ENV] = 'crash:b-loud';
    const [a, b, c] = files;
    const results = await runBatch([a, b, a, c], { ...options, jobs: 1 });
    expect(results.map(codeOf)).toEqual(['pass', 'internal_error', 'pass', 'fail']);
    expect('error' in results[1] && results[1].error.message).toMatch(/ended by SIGABRT while checking this file/);
    expect(batchChildrenOf(process.pid)).toEqual([]);
  }, 60_000);

  it('a file its child never answers for, or spins on without yielding, is stopped at the deadline', async () => {
    const [a, b, c] = files;
    for (const fault of ['hang', 'spin']) {
      process.env[LANE_FAULT_ENV] = `${fault}:b-loud`;
      const results = await runBatch([a, b, c], { ...options, jobs: 1, limits: { fileDeadlineMs: () => 4000 } });
      expect(results.map(codeOf)).toEqual(['pass', 'internal_error', 'fail']);
      expect('error' in results[1] && results[1].error.message).toMatch(/did not finish within 4 s/);
      expect(batchChildrenOf(process.pid)).toEqual([]);
    }
  }, 60_000);

  it('a child past the memory bound is replaced between files; results unchanged', async () => {
    const results = await runBatch(files.slice(0, 3), { ...options, jobs: 1, limits: { childRssLimitBytes: 1 } });
    expect(results.map(codeOf)).toEqual(['pass', 'fail', 'fail']);
  }, 60_000);

  it('a bad --fps reaches the child as every file error, not a crash', async () => {
    const results = await runBatch(files.slice(0, 2), { ...options, fps: 'nope' });
    expect(results.map(codeOf)).toEqual(['invalid_argument', 'invalid_argument']);
  }, 60_000);
});

describe('no child outlives its batch', () => {
  /** `earmark check` on two files that hang its children, as a user runs it; resolves once both children are up.
   * `spin` never yields, so only the parent's kill can end such a child. */
  async function hungBatch(fault: 'hang' | 'spin') {
    const cli = spawn(
      process.execPath,
      [join(ROOT, 'bin', 'earmark.js'), 'check', files[0], files[1], '--profile', 'ebu-r128', '--jobs', '2'],
      { env: { ...process.env, [LANE_FAULT_ENV]: `${fault}:.wav` }, stdio: 'ignore' },
    );
    const exited = new Promise<NodeJS.Signals | null>((resolve) =>
      cli.once('exit', (_code, signal) => resolve(signal)),
    );
    const pid = cli.pid ?? 0;
    expect(await waitFor(() => batchChildrenOf(pid).length === 2, 30_000)).toBe(true);
    return { cli, exited, children: batchChildrenOf(pid) };
  }
  const alive = (pid: number) => {
    try {
      process.kill(pid, 0);
      return !readFileSync(`/proc/${pid}/stat`, 'utf8').includes(') Z ');
    } catch {
      return false;
    }
  };

  it('SIGTERM to earmark kills its children, even ones that never yield, before it goes', async () => {
    const { cli, exited, children } = await hungBatch('spin');
    cli.kill('SIGTERM');
    expect(await exited).toBe('SIGTERM');
    expect(await waitFor(() => children.every((pid) => !alive(pid)), 5000)).toBe(true);
  }, 60_000);

  it('a child exits by itself when its parent dies without a word (SIGKILL)', async () => {
    const { cli, exited, children } = await hungBatch('hang');
    cli.kill('SIGKILL');
    expect(await exited).toBe('SIGKILL');
    expect(await waitFor(() => children.every((pid) => !alive(pid)), 5000)).toBe(true);
  }, 60_000);
});
