// `earmark watch`: the command spawned on a temp folder (files written slowly, renamed in from a
// temp name, unreadable, a restart with a file added while it was down), and the watcher's
// recovery from a journal a kill left behind. Settle intervals are short to keep this quick;
// nothing here asserts on time: each wait is for an outcome, with a generous deadline.

import { type ChildProcess, spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import {
  existsSync,
  linkSync,
  mkdirSync,
  readdirSync,
  readFileSync,
  renameSync,
  statSync,
  writeFileSync,
} from 'node:fs';
import { appendFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { JOURNAL_NAME } from '../../src/cli/watch-journal.ts';
import { LOCK_NAME } from '../../src/cli/watch-lock.ts';
import { Watcher, type WatchErrorReport } from '../../src/cli/watcher.ts';
import { builtinProfile, type QcReport } from '../../src/profiles/index.ts';
import { unitless } from '../helpers/units.ts';
import { SAMPLE_RATE, tempDir, writeTone } from '../profiles/helpers.ts';

const DEADLINE_MS = 60_000;
const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

async function waitFor(what: string, condition: () => boolean): Promise<void> {
  const until = Date.now() + DEADLINE_MS;
  while (!condition()) {
    if (Date.now() > until) throw new Error(`gave up waiting for ${what}`);
    await sleep(100);
  }
}

interface Running {
  child: ChildProcess;
  lines: string[];
  exit: Promise<number | null>;
}

function startWatch(folder: string, ...args: string[]): Running {
  const child = spawn(
    process.execPath,
    ['bin/earmark.js', 'watch', folder, '--profile', 'ebu-r128', '--settle-seconds', '1', ...args],
    { stdio: ['ignore', 'pipe', 'pipe'] },
  );
  const lines: string[] = [];
  let partial = '';
  child.stdout?.on('data', (chunk: Buffer) => {
    const text = partial + chunk.toString('utf8');
    const parts = text.split('\n');
    partial = parts.pop() ?? '';
    lines.push(...parts);
  });
  child.stderr?.on('data', (chunk: Buffer) => lines.push(`stderr: ${chunk.toString('utf8')}`));
  const exit = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
  return { child, lines, exit };
}

async function stopWatch(running: Running): Promise<number | null> {
  running.child.kill('SIGTERM');
  return running.exit;
}

/** The watcher's "checking <name>" lines: one per check it started. */
const checks = (lines: string[], name: string) => lines.filter((l) => l.includes(` checking ${name} (`));

const sha256 = (bytes: Buffer) => createHash('sha256').update(bytes).digest('hex');
const readJson = (path: string): unknown => JSON.parse(readFileSync(path, 'utf8'));

/** Writes `bytes` to `path` in `chunks` appends with a pause between them (a slow copy). */
async function writeSlowly(path: string, bytes: Buffer, chunks: number, pauseMs: number): Promise<void> {
  const step = Math.ceil(bytes.length / chunks);
  await writeFile(path, bytes.subarray(0, step));
  for (let at = step; at < bytes.length; at += step) {
    await sleep(pauseMs);
    await appendFile(path, bytes.subarray(at, at + step));
  }
}

const source = tempDir();
const folder = tempDir();
let passBytes = Buffer.alloc(0);
let failBytes = Buffer.alloc(0);
beforeAll(async () => {
  // EBU Tech 3341 case 1 style: a stereo 1 kHz sine at P dBFS peak reads P LUFS; EBU R 128 asks -23 ±1 LU.
  passBytes = readFileSync(await writeTone(source.dir, { segments: [{ seconds: 6, peakDbfs: -23 }] }));
  failBytes = readFileSync(await writeTone(source.dir, { segments: [{ seconds: 6, peakDbfs: -18 }] }));
});
afterAll(() => {
  source.cleanup();
  folder.cleanup();
});

describe('earmark watch', () => {
  const dir = () => folder.dir;
  let first: Running;
  const allLines: string[] = [];

  it('checks a file written slowly in chunks once, when complete', { timeout: 120_000 }, async () => {
    first = startWatch(dir());
    await waitFor('the watcher to start', () => first.lines.some((l) => l.includes(' watching ')));
    // 16 appends 200 ms apart: about 3 s of writing, each pause a fifth of the 1 s settle interval.
    await writeSlowly(join(dir(), 'slow.wav'), passBytes, 16, 200);
    const report = join(dir(), 'passed', 'slow.wav.report.json');
    await waitFor('slow.wav in passed/', () => existsSync(report) && existsSync(join(dir(), 'passed', 'slow.wav')));
    const r = readJson(report) as QcReport;
    expect(r.verdict).toBe('pass');
    // The report is of the whole file: its hash, every frame (6 s at 48 kHz), nothing cut short.
    expect(r.file?.sha256).toBe(sha256(passBytes));
    expect(Math.abs((r.format.durationSeconds ?? 0) - 6)).toBeLessThanOrEqual(1 / SAMPLE_RATE);
    expect(r.integrity.intact).toBe(true);
    expect(checks(first.lines, 'slow.wav')).toHaveLength(1);
    expect(existsSync(join(dir(), 'slow.wav'))).toBe(false);
    expect(existsSync(join(dir(), 'slow.wav.report.json'))).toBe(false);
  });

  it('leaves x.part alone until it is renamed to x.wav, then fails it', { timeout: 120_000 }, async () => {
    await writeSlowly(join(dir(), 'loud.part'), failBytes, 6, 200);
    // Several scans (and more than the settle interval) with the temp name complete: still left alone.
    await sleep(1500);
    expect(existsSync(join(dir(), 'loud.part'))).toBe(true);
    expect(first.lines.some((l) => l.includes('loud.part'))).toBe(false);
    renameSync(join(dir(), 'loud.part'), join(dir(), 'loud.wav'));
    const report = join(dir(), 'failed', 'loud.wav.report.json');
    await waitFor('loud.wav in failed/', () => existsSync(report) && existsSync(join(dir(), 'failed', 'loud.wav')));
    const r = readJson(report) as QcReport;
    expect(r.verdict).toBe('fail');
    expect(r.file?.sha256).toBe(sha256(failBytes));
    expect(r.checks.find((c) => c.ruleId === 'programme-loudness')?.passed).toBe(false);
    expect(checks(first.lines, 'loud.wav')[0]).toContain('renamed in from a temp name');
  });

  it('files an unreadable file under failed/ with its typed error, and keeps watching', {
    timeout: 120_000,
  }, async () => {
    const junk = Buffer.from('these bytes are not audio at all, whatever the name says\n'.repeat(20));
    writeFileSync(join(dir(), 'junk.wav'), junk);
    const report = join(dir(), 'failed', 'junk.wav.report.json');
    await waitFor('junk.wav in failed/', () => existsSync(report) && existsSync(join(dir(), 'failed', 'junk.wav')));
    const r = readJson(report) as WatchErrorReport;
    expect(r.verdict).toBe('fail');
    expect(r.error.code).toBe('unsupported_format');
    expect(r.file).toEqual({ name: 'junk.wav', sizeBytes: junk.length });
    expect(first.child.exitCode).toBeNull();
  });

  it('refuses a second watcher on the same folder (exit 3)', { timeout: 120_000 }, async () => {
    const second = startWatch(dir());
    expect(await second.exit).toBe(3);
    expect(second.lines.join('')).toMatch(/error invalid_argument: another watcher \(process \d+\) is watching/);
    expect(first.child.exitCode).toBeNull();
  });

  it('never overwrites a name already filed: a second slow.wav becomes slow-1.wav', { timeout: 120_000 }, async () => {
    writeFileSync(join(dir(), 'slow.wav'), passBytes);
    await waitFor('slow-1.wav in passed/', () => existsSync(join(dir(), 'passed', 'slow-1.wav.report.json')));
    expect(existsSync(join(dir(), 'passed', 'slow-1.wav'))).toBe(true);
    expect(readFileSync(join(dir(), 'passed', 'slow.wav')).equals(passBytes)).toBe(true);
  });

  it('stops on SIGTERM; a restart checks no file twice and picks up one added while it was down', {
    timeout: 120_000,
  }, async () => {
    expect(await stopWatch(first)).toBe(0);
    allLines.push(...first.lines);
    writeFileSync(join(dir(), 'late.wav'), passBytes);
    expect(existsSync(join(dir(), LOCK_NAME))).toBe(false); // a clean stop releases the lock
    // The lock a killed watcher leaves (its process is gone) is taken over.
    writeFileSync(join(dir(), LOCK_NAME), `${first.child.pid}\n`);
    const second = startWatch(dir());
    await waitFor('late.wav in passed/', () => existsSync(join(dir(), 'passed', 'late.wav.report.json')));
    expect(await stopWatch(second)).toBe(0);
    allLines.push(...second.lines);
    expect(checks(allLines, 'late.wav')).toHaveLength(1);
    expect(checks(allLines, 'loud.wav')).toHaveLength(1);
    expect(checks(allLines, 'junk.wav')).toHaveLength(1);
    expect(checks(allLines, 'slow.wav')).toHaveLength(2); // the first and the second delivery
    expect(
      readdirSync(dir())
        .filter((n) => !n.startsWith('.'))
        .sort(),
    ).toEqual(['failed', 'passed', 'warned']);
    const journal = readJson(join(dir(), JOURNAL_NAME)) as { entries: Record<string, { state: string }> };
    for (const name of ['late.wav', 'loud.wav', 'junk.wav', 'slow.wav'])
      expect(journal.entries[name]?.state).toBe('done');
    // Units on every printed value, the log included (test/helpers/units.ts).
    expect(unitless(allLines.join('\n'))).toEqual([]);
  });
});

describe('earmark watch on SIGINT', () => {
  it('finishes the file in progress, files it, and exits 0', { timeout: 120_000 }, async () => {
    const { dir, cleanup } = tempDir();
    try {
      const running = startWatch(dir);
      await waitFor('the watcher to start', () => running.lines.some((l) => l.includes(' watching ')));
      // 90 s of audio: a check long enough that the signal usually lands during it.
      const long = await writeTone(source.dir, { segments: [{ seconds: 90, peakDbfs: -23 }] });
      renameSync(long, join(dir, 'long.wav'));
      await waitFor('the check to start', () => checks(running.lines, 'long.wav').length === 1);
      running.child.kill('SIGINT');
      expect(await running.exit).toBe(0);
      expect(existsSync(join(dir, 'passed', 'long.wav'))).toBe(true);
      expect((readJson(join(dir, 'passed', 'long.wav.report.json')) as QcReport).verdict).toBe('pass');
    } finally {
      cleanup();
    }
  });
});

describe('watcher in process', () => {
  it('sorts into passed/, warned/ and failed/ with two jobs at a time', { timeout: 120_000 }, async () => {
    const { dir, cleanup } = tempDir();
    try {
      // Podcast (common practice): -16 LUFS; mono is a warning. A mono -13 dBFS-peak sine reads -16 LUFS
      // (BS.1770-5: one channel, 3 dB under the stereo pair), a stereo -16 dBFS-peak sine -16 LUFS.
      renameSync(
        await writeTone(source.dir, { channels: 1, segments: [{ seconds: 6, peakDbfs: -13 }] }),
        join(dir, 'mono.wav'),
      );
      renameSync(await writeTone(source.dir, { segments: [{ seconds: 6, peakDbfs: -16 }] }), join(dir, 'stereo.wav'));
      writeFileSync(join(dir, 'cut.flac'), Buffer.from('fLaC\u0000\u0000\u0000\u0022', 'latin1'));
      writeFileSync(join(dir, 'empty.wav'), Buffer.alloc(0));
      writeFileSync(join(dir, 'notes.txt'), 'not audio: left alone\n');
      const lines: string[] = [];
      const watcher = new Watcher({
        folder: dir,
        profile: builtinProfile('podcast'),
        settleMs: 300,
        jobs: 2,
        check: {},
        log: (line) => lines.push(line),
      });
      await watcher.start();
      const filed = ['warned/mono.wav', 'passed/stereo.wav', 'failed/cut.flac'];
      await waitFor('every file filed', () => filed.every((p) => existsSync(join(dir, `${p}.report.json`))));
      expect(await watcher.stop(30_000)).toBe(true);
      for (const p of filed) expect(existsSync(join(dir, p)), p).toBe(true);
      expect((readJson(join(dir, 'failed', 'cut.flac.report.json')) as WatchErrorReport).error.code).toBe(
        'corrupt_file',
      );
      // Left alone: a file that is not audio, and an empty one (a copy that has not started).
      expect(existsSync(join(dir, 'notes.txt'))).toBe(true);
      expect(existsSync(join(dir, 'empty.wav'))).toBe(true);
      expect(unitless(lines.join('\n'))).toEqual([]);
    } finally {
      cleanup();
    }
  });
});

describe('watcher recovery from the journal a kill left', () => {
  it('finishes an interrupted move without checking again, and re-checks an interrupted check', {
    timeout: 120_000,
  }, async () => {
    const { dir, cleanup } = tempDir();
    try {
      writeFileSync(join(dir, 'moved-half.wav'), passBytes);
      writeFileSync(join(dir, 'checked.wav'), failBytes);
      writeFileSync(join(dir, 'checked.wav.report.json'), '{"verdict":"fail","seeded":true}\n');
      writeFileSync(join(dir, 'interrupted.wav'), passBytes);
      // A kill between the hard link and the unlink of a move: the file is in both places.
      mkdirSync(join(dir, 'passed'));
      linkSync(join(dir, 'moved-half.wav'), join(dir, 'passed', 'moved-half.wav'));
      writeFileSync(join(dir, 'passed', 'moved-half.wav.report.json'), '{"verdict":"pass","seeded":true}\n');
      const identity = (name: string) => {
        const s = statSync(join(dir, name));
        return { sizeBytes: s.size, mtimeMs: s.mtimeMs, updatedAt: new Date().toISOString() };
      };
      const entries = {
        'moved-half.wav': {
          ...identity('moved-half.wav'),
          state: 'checked',
          verdict: 'pass',
          fileTo: 'passed/moved-half.wav',
          reportTo: 'passed/moved-half.wav.report.json',
        },
        'checked.wav': {
          ...identity('checked.wav'),
          state: 'checked',
          verdict: 'fail',
          fileTo: 'failed/checked.wav',
          reportTo: 'failed/checked.wav.report.json',
        },
        'interrupted.wav': { ...identity('interrupted.wav'), state: 'checking' },
      };
      writeFileSync(join(dir, JOURNAL_NAME), JSON.stringify({ version: 1, entries }));
      const lines: string[] = [];
      const watcher = new Watcher({
        folder: dir,
        profile: builtinProfile('ebu-r128'),
        settleMs: 300,
        jobs: 2,
        check: { threads: 1 },
        log: (line) => lines.push(line),
      });
      await watcher.start();
      await waitFor(
        'every file filed',
        () =>
          ['passed/interrupted.wav.report.json', 'failed/checked.wav.report.json', 'passed/moved-half.wav'].every((p) =>
            existsSync(join(dir, p)),
          ) && !existsSync(join(dir, 'moved-half.wav')),
      );
      expect(await watcher.stop(30_000)).toBe(true);
      expect(lines.filter((l) => l.startsWith('checking '))).toEqual([
        `checking interrupted.wav (${passBytes.length} bytes; again)`,
      ]);
      expect(lines).toContain('interrupted.wav: its check was interrupted; checking it again');
      // The moves used the seeded reports (no check ran for them) and made no second copy.
      expect(readJson(join(dir, 'failed', 'checked.wav.report.json'))).toEqual({ verdict: 'fail', seeded: true });
      expect(readdirSync(join(dir, 'passed')).sort()).toEqual([
        'interrupted.wav',
        'interrupted.wav.report.json',
        'moved-half.wav',
        'moved-half.wav.report.json',
      ]);
      expect((readJson(join(dir, 'passed', 'interrupted.wav.report.json')) as QcReport).verdict).toBe('pass');
    } finally {
      cleanup();
    }
  });
});
