// A package's set check off the worker's event loop, on a worker thread of its own
// (package-set-thread.ts): the lockstep decode of every member is CPU-bound for as long as the
// files last, and the worker's lock renewals and other jobs must not wait on it. A thread (not a
// second sandboxed child) because the parent already holds what the check needs (the local
// copies, the members' frozen profiles), and the thread needs no Redis and no storage; it ends
// after one check, so the decoders' WebAssembly memory goes back with it.
import { Worker } from 'node:worker_threads';
import type { PackageSetResult } from '../engine/package-set.ts';
import { EarmarkError, fromWireError } from '../errors/index.ts';
import type { FromPackageSetThread, PackageSetThreadData } from './package-set-thread.ts';

// From the TypeScript sources through tsx (as excerpt-runner.ts does); inside a bundle, the
// bundled dist/package-set-thread.mjs beside it (bin/build.js).
const BUNDLED = !import.meta.url.endsWith('.ts');
/** The V8 heap holds one block per member, not the audio: a small cap is plenty. */
const HEAP_MB = 128;

function startThread(workerData: PackageSetThreadData): Worker {
  const resourceLimits = { maxOldGenerationSizeMb: HEAP_MB, maxYoungGenerationSizeMb: 16 };
  if (BUNDLED) return new Worker(new URL('./package-set-thread.mjs', import.meta.url), { workerData, resourceLimits });
  const boot = `import(${JSON.stringify(import.meta.resolve('tsx/esm/api'))})
  .then(({ register }) => { register(); return import(${JSON.stringify(new URL('./package-set-thread.ts', import.meta.url).href)}); })`;
  return new Worker(boot, { eval: true, workerData, resourceLimits });
}

export class PackageSetRunner {
  private readonly live = new Set<Worker>();

  run(data: PackageSetThreadData): Promise<PackageSetResult> {
    return new Promise<PackageSetResult>((resolve, reject) => {
      const worker = startThread(data);
      this.live.add(worker);
      let settled = false;
      const finish = (error: Error | null, set?: PackageSetResult) => {
        if (settled) return;
        settled = true;
        this.live.delete(worker);
        void worker.terminate();
        if (error) reject(error);
        else resolve(set!);
      };
      worker.on('message', (m: FromPackageSetThread) => {
        if (m.type === 'done') finish(null, m.set);
        else finish(fromWireError(m.error));
      });
      // ERR_WORKER_OUT_OF_MEMORY lands here.
      worker.on('error', (error) =>
        finish(new EarmarkError('internal_error', `the package check thread failed: ${error.message}`)),
      );
      worker.on('exit', (code) =>
        finish(new EarmarkError('internal_error', `the package check thread exited with code ${code}`)),
      );
    });
  }

  /** Ends every running check (shutdown past its bound); their jobs are handed back. */
  async close(): Promise<void> {
    await Promise.all([...this.live].map((w) => w.terminate()));
  }
}
