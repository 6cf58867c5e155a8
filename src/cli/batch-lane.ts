// One lane of a batch: a child process (batch-child.ts) started once and reused for file after
// file, so a batch of short files does not pay a process start per file. Isolation stays: a file
// that crashes or hangs the child ends that child only (the file gets an internal_error naming the
// cause) and the next file gets a fresh one; a child past the memory bound is retired between files.
import { fork, type ChildProcess } from 'node:child_process';
import { stat } from 'node:fs/promises';
import { join } from 'node:path';
import { currentBundle } from '../../bin/bundles.js';
import { PROJECT_ROOT } from '../config/paths.ts';
import type { WireError } from '../errors/index.ts';
import type { BatchResult } from './batch.ts';
import { parseReply } from './batch-wire.ts';

export interface LaneSettings {
  /** `--profile` as given: the child resolves it once. */
  profile: string;
  fps?: string;
  layout?: string;
  threads: string;
}

export interface LaneLimits {
  /** How long a file may take before its child is killed: generous, only against a hang. */
  fileDeadlineMs: (sizeBytes: number) => number;
  /** A child whose resident memory is past this after a file is replaced before the next. */
  childRssLimitBytes: number;
}

/** 2 minutes plus 1 minute per MB: a 3-minute 48 kHz/24-bit WAV (52 MB) checks in about 1 s,
 * and the slowest reading path (low-bitrate compressed audio with a dialogue reading) stays
 * tens of times inside it. */
export const defaultFileDeadlineMs = (sizeBytes: number) => 120_000 + (sizeBytes / 1e6) * 60_000;
/** setTimeout's largest delay (about 24.8 days): past it Node fires at once. */
const MAX_TIMER_MS = 2 ** 31 - 1;

/** The bundle while it is current (bin/bundles.js), else the TypeScript source through tsx. */
function childEntry(): { path: string; execArgv: string[] } {
  const bundle = currentBundle('batch-child');
  if (bundle) return { path: new URL(bundle).pathname, execArgv: process.execArgv };
  return {
    path: join(PROJECT_ROOT, 'src', 'cli', 'batch-child.ts'),
    execArgv: [...process.execArgv, '--import', import.meta.resolve('tsx')],
  };
}

const STDERR_TAIL_CHARS = 2000;

export class BatchLane {
  private child: ChildProcess | null = null;
  private stderrTail = '';
  private nextId = 0;
  private closed = false;

  constructor(
    private readonly settings: LaneSettings,
    private readonly limits: LaneLimits,
  ) {}

  private start(): ChildProcess {
    const { path, execArgv } = childEntry();
    const s = this.settings;
    const args = ['--profile', s.profile, '--threads', s.threads];
    if (s.fps) args.push('--fps', s.fps);
    if (s.layout) args.push('--layout', s.layout);
    const child = fork(path, args, { execArgv, stdio: ['ignore', 'ignore', 'pipe', 'ipc'] });
    child.stderr?.on('data', (b: Buffer) => {
      this.stderrTail = (this.stderrTail + b.toString('utf8')).slice(-STDERR_TAIL_CHARS);
    });
    child.once('exit', () => {
      if (this.child === child) this.child = null;
    });
    // A send to a child that just died fails here; its 'exit' reports the file.
    child.on('error', () => {});
    this.child = child;
    return child;
  }

  /** One file in this lane's child: its summary, or its error. */
  async check(file: string): Promise<BatchResult> {
    const sizeBytes = (await stat(file).catch(() => null))?.size ?? 0;
    const deadlineMs = Math.min(this.limits.fileDeadlineMs(sizeBytes), MAX_TIMER_MS);
    if (this.closed) return { file, error: internalError('the batch was stopped before this file') };
    const alive = this.child && this.child.exitCode === null && this.child.signalCode === null && this.child.connected;
    const child = alive && this.child ? this.child : this.start();
    const id = ++this.nextId;
    this.stderrTail = '';
    return new Promise((resolve) => {
      const finish = (result: BatchResult) => {
        clearTimeout(timer);
        child.off('message', onMessage);
        child.off('exit', onExit);
        child.off('error', onError);
        resolve(result);
      };
      const onMessage = (message: unknown) => {
        const reply = parseReply(message);
        if (reply === null) {
          this.discard(child, 'SIGKILL');
          finish({ file, error: internalError('the check sent an answer it should not have') });
          return;
        }
        if (reply.id !== id) return;
        // A grown child goes between files (its memory is rarely handed back).
        if (reply.rssBytes > this.limits.childRssLimitBytes) this.discard(child, 'SIGTERM');
        finish('report' in reply ? { file, report: reply.report } : { file, error: reply.error });
      };
      const onExit = (code: number | null, signal: NodeJS.Signals | null) =>
        finish({ file, error: internalError(exitCause(code, signal, this.stderrTail), { exitCode: code, signal }) });
      // A fork that failed (no process id) may never send 'exit'.
      const onError = (e: Error) => {
        if (child.pid !== undefined) return;
        this.discard(child, 'SIGKILL');
        finish({ file, error: internalError(`could not start a check: ${e.message}`) });
      };
      const timer = setTimeout(() => {
        this.discard(child, 'SIGKILL');
        finish({
          file,
          error: internalError(`the check did not finish within ${Math.round(deadlineMs / 1000)} s and was stopped`, {
            deadlineSeconds: Math.round(deadlineMs / 1000),
          }),
        });
      }, deadlineMs);
      child.on('message', onMessage);
      child.once('exit', onExit);
      child.on('error', onError);
      child.send({ id, file }, () => {});
    });
  }

  /** Ends a child and forgets it at once, so the next file starts a fresh one even before its 'exit' arrives. */
  private discard(child: ChildProcess, signal: NodeJS.Signals): void {
    if (this.child === child) this.child = null;
    child.kill(signal);
  }

  /** Stops the child now (SIGKILL: a child spinning in a decoder must not outlive the batch). */
  kill(): void {
    this.closed = true;
    this.child?.kill('SIGKILL');
  }

  /** Ends the child after the batch and waits until it has gone. */
  async close(): Promise<void> {
    this.closed = true;
    const child = this.child;
    if (!child || child.exitCode !== null || child.signalCode !== null) return;
    const gone = new Promise((resolve) => child.once('exit', resolve));
    child.kill('SIGTERM');
    const force = setTimeout(() => child.kill('SIGKILL'), 2000);
    await gone;
    clearTimeout(force);
  }
}

function internalError(message: string, details: Record<string, unknown> = {}): WireError {
  return { code: 'internal_error', message, details };
}

/** Why a child ended mid-file, in words: a signal, running out of memory, or an exit code. */
function exitCause(code: number | null, signal: NodeJS.Signals | null, stderr: string): string {
  const outOfMemory = /heap out of memory|Reached heap limit|Cannot allocate memory/i.test(stderr);
  const how = outOfMemory ? 'ran out of memory' : signal ? `was ended by ${signal}` : `exited with code ${code}`;
  const last = stderr.trim().split('\n').at(-1)?.slice(0, 300);
  return `the check's process ${how} while checking this file${last ? ` (${last})` : ''}`;
}
