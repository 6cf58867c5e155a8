// The analysis split across threads by whole meters: the main thread runs one group, each worker
// thread another, on copies of the same blocks in the same order. Every meter is the serial
// meter, so the merged Measurements equal the serial AnalysisRunner's exactly (no cross-thread
// arithmetic). At most IN_FLIGHT blocks wait per worker, so memory stays flat with duration.
import { Worker } from 'node:worker_threads';
import type { PcmBlock, StreamInfo } from '../analysis/audio.ts';
import { AnalysisRunner, ENVELOPE_METERS, METER_NAMES, type AnalysisOptions, type Measurements, type MeterName } from '../analysis/runner.ts';
import { EarmarkError } from '../errors/index.ts';
import type { FromWorker, ToWorker } from './parallel-worker.ts';

const IN_FLIGHT = 3;
/** Cost per stereo audio minute (ms), measured as each thread's busy time in a two-thread run of
 * the 60-minute benchmark file; decoding and the shared envelope pass count against the thread
 * that runs them. */
const COST: Record<MeterName, number> = {
  loudness: 19, timeWeighted: 10, truePeak: 5, channelRelations: 2.5, silence: 2, levels: 1.5, clipping: 0.5,
};
const ENVELOPE_COST = 2;
/** Decoding (9) plus copying and posting each block to the worker threads (2). */
const MAIN_THREAD_DECODE_COST = 11;
// From the TypeScript sources the worker loads them through tsx, as bin/run.js does for
// entrypoints; inside the dist/ bundle (bin/build.js) it is the bundled dist/parallel-worker.mjs.
const BUNDLED = !import.meta.url.endsWith('.ts');
function startWorker(workerData: unknown): Worker {
  if (BUNDLED) return new Worker(new URL('./parallel-worker.mjs', import.meta.url), { workerData });
  const boot = `import(${JSON.stringify(import.meta.resolve('tsx/esm/api'))})
  .then(({ register }) => { register(); return import(${JSON.stringify(new URL('./parallel-worker.ts', import.meta.url).href)}); })`;
  return new Worker(boot, { eval: true, workerData });
}

/** Load of each thread for an assignment of meters to threads (thread 0 also decodes). */
function loads(assignment: number[], threads: number): number[] {
  const load = Array.from({ length: threads }, (_, i) => (i === 0 ? MAIN_THREAD_DECODE_COST : 0));
  const hasEnvelope = new Array<boolean>(threads).fill(false);
  METER_NAMES.forEach((name, m) => {
    const t = assignment[m];
    load[t] += COST[name];
    if (ENVELOPE_METERS.includes(name) && !hasEnvelope[t]) { hasEnvelope[t] = true; load[t] += ENVELOPE_COST; }
  });
  return load;
}

/** More threads than this cannot shorten the run: loudness alone is over a quarter of the work. */
const MAX_METER_THREADS = 4;

/**
 * The split of the meters into `threads` groups with the smallest largest load, found by trying
 * every assignment (7 meters: 128 for two threads, 16384 for four); group 0 is the main thread's.
 */
export function meterGroups(threads: number): MeterName[][] {
  const n = Math.max(1, Math.min(Math.floor(threads), MAX_METER_THREADS));
  const assignment = new Array<number>(METER_NAMES.length).fill(0);
  let best = [...assignment], bestLoad = Math.max(...loads(assignment, n));
  for (let code = 1; code < n ** METER_NAMES.length; code++) {
    for (let m = 0, c = code; m < METER_NAMES.length; m++, c = Math.floor(c / n)) assignment[m] = c % n;
    const load = Math.max(...loads(assignment, n));
    if (load < bestLoad) { best = [...assignment]; bestLoad = load; }
  }
  const groups = Array.from({ length: n }, (_, t) => METER_NAMES.filter((_, m) => best[m] === t));
  return groups.filter((g, i) => i === 0 || g.length > 0);
}

class MeterThread {
  private readonly worker: Worker;
  private readonly free: ArrayBuffer[][] = [];
  private inFlight = 0;
  private waiting: (() => void) | null = null;
  private finished: ((result: Record<string, unknown>) => void) | null = null;
  private failure: Error | null = null;

  constructor(info: StreamInfo, options: AnalysisOptions, meters: MeterName[]) {
    this.worker = startWorker({ info, options, meters });
    this.worker.on('message', (message: FromWorker) => {
      if (message.type === 'done-block') { this.inFlight--; this.free.push(message.buffers); }
      else if (message.type === 'result') this.finished?.(message.result);
      else this.fail(new Error(message.message));
      this.wake();
    });
    this.worker.on('error', (error) => { this.fail(error); this.wake(); });
  }

  private fail(error: Error): void { this.failure ??= error; }
  private wake(): void { const w = this.waiting; this.waiting = null; w?.(); }
  private check(): void {
    if (this.failure) throw new EarmarkError('internal_error', `an analysis thread failed: ${this.failure.message}`);
  }

  /** Copies the block into buffers the worker owns until it hands them back. */
  async send(block: PcmBlock): Promise<void> {
    while (this.inFlight >= IN_FLIGHT && !this.failure) await new Promise<void>((r) => { this.waiting = r; });
    this.check();
    let buffers = this.free.pop();
    if (!buffers || buffers[0].byteLength < block.frames * 4) {
      buffers = block.channelData.map(() => new ArrayBuffer(block.frames * 4));
    }
    buffers.forEach((b, c) => new Float32Array(b, 0, block.frames).set(block.channelData[c].subarray(0, block.frames)));
    this.inFlight++;
    this.worker.postMessage({ type: 'block', frames: block.frames, buffers } satisfies ToWorker, buffers);
  }

  async result(): Promise<Record<string, unknown>> {
    this.check();
    const result = new Promise<Record<string, unknown>>((resolve) => { this.finished = resolve; });
    this.worker.postMessage({ type: 'end' } satisfies ToWorker);
    // Either the result arrives or a failure wakes us.
    while (!this.failure) {
      const woken = new Promise<'woken'>((r) => { this.waiting = () => r('woken'); });
      if ((await Promise.race([result, woken])) !== 'woken') return result;
    }
    this.check();
    return result;
  }

  close(): Promise<number> { return this.worker.terminate(); }
}

export class ParallelAnalysisRunner {
  private readonly main: AnalysisRunner;
  private readonly threads: MeterThread[];

  constructor(readonly info: StreamInfo, options: AnalysisOptions = {}, threads = 2) {
    const [mine, ...theirs] = meterGroups(Math.max(1, Math.floor(threads)));
    this.main = new AnalysisRunner(info, options, mine);
    this.threads = theirs.map((group) => new MeterThread(info, options, group));
  }

  async push(block: PcmBlock): Promise<void> {
    // Hand the block out first, so the workers run while this thread runs its own meters.
    for (const thread of this.threads) await thread.send(block);
    this.main.push(block);
  }

  async result(): Promise<Measurements> {
    const parts = [this.main.partialResult(), ...(await Promise.all(this.threads.map((t) => t.result())))] as Partial<Measurements>[];
    const merged: Record<string, unknown> = { frames: parts[0].frames };
    // Fields in the serial runner's order, so documents serialise identically.
    for (const name of METER_NAMES) merged[name] = parts.find((p) => name in p)?.[name];
    return merged as unknown as Measurements;
  }

  async close(): Promise<void> {
    await Promise.all(this.threads.map((t) => t.close()));
  }
}
