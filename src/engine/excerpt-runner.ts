// Excerpts for the service, off the API's event loop: each runs on a worker thread of its own
// (excerpt-thread.ts) with a small V8 heap, at most `threads` at a time and `queued` waiting;
// beyond that the caller gets 503 with Retry-After. A thread is ended when its client goes away
// or its deadline passes, and ends by itself after one excerpt, so the decoders' WebAssembly
// memory (which never shrinks) goes back with it.
import { Worker } from 'node:worker_threads';
import { EarmarkError, fromWireError } from '../errors/index.ts';
import type { Excerpt } from './excerpt.ts';
import type { ExcerptThreadData, FromExcerptThread } from './excerpt-thread.ts';

export interface ExcerptRunnerOptions {
  /** Excerpts running at once. */
  threads?: number;
  /** Excerpts waiting for a thread; more are refused with 503. */
  queued?: number;
  /** A thread still running after this is ended (503). */
  deadlineMs?: number;
  /** V8 old-generation cap per thread; decoded samples live outside it and are capped in excerpt.ts. */
  maxOldGenerationSizeMb?: number;
}

// From the TypeScript sources the thread loads them through tsx (as parallel-runner.ts does);
// inside a dist/ bundle it is the bundled dist/excerpt-thread.mjs (bin/build.js).
const BUNDLED = !import.meta.url.endsWith('.ts');
function startThread(workerData: ExcerptThreadData, maxOldGenerationSizeMb: number): Worker {
  const resourceLimits = { maxOldGenerationSizeMb, maxYoungGenerationSizeMb: 16 };
  if (BUNDLED) return new Worker(new URL('./excerpt-thread.mjs', import.meta.url), { workerData, resourceLimits });
  const boot = `import(${JSON.stringify(import.meta.resolve('tsx/esm/api'))})
  .then(({ register }) => { register(); return import(${JSON.stringify(new URL('./excerpt-thread.ts', import.meta.url).href)}); })`;
  return new Worker(boot, { eval: true, workerData, resourceLimits });
}

const busy = (message: string) => new EarmarkError('service_unavailable', message);

export class ExcerptRunner {
  private readonly threads: number;
  private readonly queued: number;
  private readonly deadlineMs: number;
  private readonly heapMb: number;
  private running = 0;
  private readonly waiting: (() => void)[] = [];
  private readonly live = new Set<Worker>();
  private closed = false;

  constructor(options: ExcerptRunnerOptions = {}) {
    this.threads = Math.max(1, options.threads ?? 2);
    this.queued = Math.max(0, options.queued ?? 4);
    this.deadlineMs = options.deadlineMs ?? 30_000;
    this.heapMb = options.maxOldGenerationSizeMb ?? 96;
  }

  /** Excerpts running now (for tests and metrics). */
  get active(): number {
    return this.running;
  }

  async cut(path: string, startSeconds: number, endSeconds: number, signal?: AbortSignal): Promise<Excerpt> {
    if (this.closed) throw busy('the service is shutting down');
    if (this.running >= this.threads) {
      if (this.waiting.length >= this.queued) throw busy('too many excerpts are being cut; retry shortly');
      await new Promise<void>((resolve, reject) => {
        const go = () => {
          signal?.removeEventListener('abort', drop);
          resolve();
        };
        const drop = () => {
          const i = this.waiting.indexOf(go);
          if (i >= 0) this.waiting.splice(i, 1);
          reject(aborted());
        };
        this.waiting.push(go);
        signal?.addEventListener('abort', drop, { once: true });
      });
      // The finishing excerpt handed its slot over: `running` already counts this one.
    } else this.running++;
    try {
      return await this.runThread({ path, startSeconds, endSeconds }, signal);
    } finally {
      const next = this.waiting.shift();
      if (next) next();
      else this.running--;
    }
  }

  private runThread(data: ExcerptThreadData, signal?: AbortSignal): Promise<Excerpt> {
    if (signal?.aborted) return Promise.reject(aborted());
    return new Promise<Excerpt>((resolve, reject) => {
      const worker = startThread(data, this.heapMb);
      this.live.add(worker);
      let settled = false;
      const finish = (error: Error | null, value?: Excerpt) => {
        if (settled) return;
        settled = true;
        clearTimeout(timer);
        signal?.removeEventListener('abort', onAbort);
        this.live.delete(worker);
        void worker.terminate();
        if (error) reject(error);
        else resolve(value!);
      };
      const onAbort = () => finish(aborted());
      const timer = setTimeout(
        () => finish(busy(`the excerpt took longer than ${this.deadlineMs} ms; try a shorter or earlier span`)),
        this.deadlineMs,
      );
      signal?.addEventListener('abort', onAbort, { once: true });
      worker.on('message', (m: FromExcerptThread) => {
        if (m.type === 'done')
          finish(null, {
            wav: m.wav,
            startSeconds: m.startSeconds,
            endSeconds: m.endSeconds,
            sampleRate: m.sampleRate,
            channels: m.channels,
          });
        else finish(fromWireError(m.error));
      });
      // ERR_WORKER_OUT_OF_MEMORY lands here: the heap cap was hit.
      worker.on('error', (error) =>
        finish(new EarmarkError('internal_error', `the excerpt thread failed: ${error.message}`)),
      );
      worker.on('exit', (code) =>
        finish(new EarmarkError('internal_error', `the excerpt thread exited with code ${code}`)),
      );
    });
  }

  /** Ends every running thread and refuses new work. */
  async close(): Promise<void> {
    this.closed = true;
    await Promise.all([...this.live].map((w) => w.terminate()));
  }
}

function aborted(): EarmarkError {
  return new EarmarkError('cancelled', 'the client went away');
}
