// The analysis split across threads by whole meters: the main thread decodes, builds each block's
// envelope and runs one group; each worker thread runs another group on the same blocks, read in
// place from a shared ring (block-ring.ts). Every meter is the serial meter, so the merged
// Measurements equal the serial AnalysisRunner's exactly (no cross-thread arithmetic). The ring
// has a fixed number of slots, so memory stays flat with duration.
import { Worker } from 'node:worker_threads';
import type { PcmBlock, StreamInfo } from '../analysis/audio.ts';
import {
  AnalysisRunner,
  isCompleteMeasurements,
  METER_NAMES,
  METERS,
  type AnalysisOptions,
  type Measurements,
  type MeterContext,
  type MeterName,
  SPEECH_COST_MS_PER_MINUTE,
} from '../analysis/runner.ts';
import { EarmarkError, fromWireError } from '../errors/index.ts';
import { EnvelopeBuilder } from '../analysis/envelope.ts';
import { BlockRing, createRing } from './block-ring.ts';
import type { FromWorker, MeterThreadData } from './parallel-worker.ts';

/** The decoders' default largest block (decode/types.ts DEFAULT_MAX_BLOCK_FRAMES). */
const DEFAULT_RING_FRAMES = 65536;
/** In ms per stereo audio minute, as each meter's costMsPerMinute (runner.ts METERS): the main
 * thread decodes (a WAV: 10.5; decode/decoder.ts costMsPerMinute) and builds the shared envelope. */
const ENVELOPE_COST = 2;
const PCM_DECODE_COST = 10.5;
/** A worker's first meter reads each block from the other core's cache: measured as about 1.5. */
const WORKER_THREAD_COST = 1.5;
// From the TypeScript sources the worker loads them through tsx, as bin/run.js does for
// entrypoints; inside the dist/ bundle (bin/build.js) it is the bundled dist/parallel-worker.mjs.
const BUNDLED = !import.meta.url.endsWith('.ts');
function startWorker(workerData: MeterThreadData): Worker {
  if (BUNDLED) return new Worker(new URL('./parallel-worker.mjs', import.meta.url), { workerData });
  const boot = `import(${JSON.stringify(import.meta.resolve('tsx/esm/api'))})
  .then(({ register }) => { register(); return import(${JSON.stringify(new URL('./parallel-worker.ts', import.meta.url).href)}); })`;
  return new Worker(boot, { eval: true, workerData });
}

/** Meters searched over; lighter ones (under 1 ms per stereo minute, or off unless asked) join the
 * least loaded group after the search, since each would multiply it by the thread count. */
const COSTED = METER_NAMES.filter((name) => METERS[name].costMsPerMinute >= 1);

/** Load of each thread for an assignment of the costed meters to threads (thread 0 is the main thread). */
function loads(assignment: number[], threads: number, mainCost: number): number[] {
  const load = Array.from({ length: threads }, (_, i) => (i === 0 ? mainCost : 0));
  COSTED.forEach((name, m) => {
    load[assignment[m]] += METERS[name].costMsPerMinute;
  });
  // A worker thread with no meters is not started (meterGroups drops it).
  return load.map((l, t) => (t > 0 && l > 0 ? l + WORKER_THREAD_COST : l));
}

/** More threads than this cannot shorten the run: loudness alone is over a quarter of the work. */
const MAX_METER_THREADS = 4;

/**
 * The split of the meters into `threads` groups with the smallest largest load, found by trying
 * every assignment of the costed meters (8: 256 for two threads, 65536 for four); group 0 is the
 * main thread's, which also decodes (and hashes): `decodeCost` in the same units, a WAV's by
 * default.
 */
export function meterGroups(threads: number, decodeCost = PCM_DECODE_COST): MeterName[][] {
  const n = Math.max(1, Math.min(Math.floor(threads), MAX_METER_THREADS));
  const mainCost = decodeCost + ENVELOPE_COST;
  const assignment = new Array<number>(COSTED.length).fill(0);
  let best = [...assignment],
    bestLoad = Math.max(...loads(assignment, n, mainCost));
  for (let code = 1; code < n ** COSTED.length; code++) {
    for (let m = 0, c = code; m < COSTED.length; m++, c = Math.floor(c / n)) assignment[m] = c % n;
    const load = Math.max(...loads(assignment, n, mainCost));
    if (load < bestLoad) {
      best = [...assignment];
      bestLoad = load;
    }
  }
  const load = loads(best, n, mainCost);
  const started = load.map((l, t) => t === 0 || l > 0);
  const lightest = load.reduce((min, l, t) => (started[t] && l < load[min] ? t : min), 0);
  const groupOf = (name: MeterName) => {
    if (METERS[name].mainThreadOnly) return 0;
    const m = COSTED.indexOf(name);
    return m < 0 ? lightest : best[m];
  };
  const groups = Array.from({ length: n }, (_, t) => METER_NAMES.filter((name) => groupOf(name) === t));
  return groups.filter((g, i) => i === 0 || g.length > 0);
}

class MeterThread {
  private readonly worker: Worker;
  private posted: Record<string, unknown> | null = null;
  private failure: Error | null = null;
  private settled: (() => void) | null = null;

  constructor(
    info: StreamInfo,
    options: AnalysisOptions,
    meters: MeterName[],
    ring: BlockRing,
    readonly reader: number,
  ) {
    const data: MeterThreadData = { info, options, meters, ring: ring.shape, reader };
    this.worker = startWorker(data);
    const wake = () => {
      ring.wakeWriter(reader);
      this.settled?.();
    };
    this.worker.on('message', (message: FromWorker) => {
      if (message.type === 'result') this.posted = message.result;
      else this.fail(fromWireError(message.error));
      wake();
    });
    this.worker.on('error', (error) => {
      this.fail(error);
      wake();
    });
    this.worker.on('exit', (code) => {
      if (!this.posted) this.fail(new Error(`exited with code ${code} before its result`));
      wake();
    });
  }

  private fail(error: Error): void {
    this.failure ??= error;
  }

  /** Throws if the thread failed. */
  readonly check = (): void => {
    // A meter's own error keeps its code, as on one thread; a crashed thread is internal.
    if (this.failure instanceof EarmarkError) throw this.failure;
    if (this.failure) throw new EarmarkError('internal_error', `an analysis thread failed: ${this.failure.message}`);
  };

  /** The thread's results, once the ring is finished. */
  async result(): Promise<Record<string, unknown>> {
    while (!this.posted && !this.failure)
      await new Promise<void>((resolve) => {
        this.settled = resolve;
      });
    this.check();
    return this.posted!;
  }

  close(): Promise<number> {
    return this.worker.terminate();
  }
}

/** The one thread's result for a meter (each meter runs on exactly one thread). */
function take<K extends MeterName>(
  into: Partial<Measurements>,
  name: K,
  parts: readonly Partial<Measurements>[],
): void {
  const result = parts.find((p) => p[name] !== undefined)?.[name];
  if (result !== undefined) into[name] = result;
}

export interface ParallelRunnerOptions {
  /** Largest block that will be pushed (the decoder's maxBlockFrames); sizes the shared ring. */
  maxBlockFrames?: number;
  /** The main thread's own work besides its meters, in ms per stereo audio minute: decoding and
   * hashing (thread-plan.ts). Default: a WAV's decode. */
  decodeCostMsPerMinute?: number;
}

export class ParallelAnalysisRunner {
  private readonly main: AnalysisRunner;
  private readonly threads: MeterThread[];
  private readonly ring: BlockRing | null;
  private readonly envelopes: EnvelopeBuilder;
  private pushed = 0;

  constructor(
    readonly info: StreamInfo,
    options: AnalysisOptions = {},
    threads = 2,
    { maxBlockFrames = DEFAULT_RING_FRAMES, decodeCostMsPerMinute = PCM_DECODE_COST }: ParallelRunnerOptions = {},
    context: MeterContext = {},
  ) {
    // The speech detector stays on this thread (mainThreadOnly): its time is this thread's too.
    const mainCost = decodeCostMsPerMinute + (options.speech?.enabled ? SPEECH_COST_MS_PER_MINUTE : 0);
    const [mine, ...theirs] = meterGroups(Math.max(1, Math.floor(threads)), mainCost);
    this.main = new AnalysisRunner(info, options, mine, context);
    // The envelope is built once, here, and shared with every thread through the ring.
    this.envelopes = new EnvelopeBuilder();
    this.ring = theirs.length ? new BlockRing(createRing(info.channels, maxBlockFrames, true)) : null;
    this.threads = theirs.map((group, reader) => new MeterThread(info, options, group, this.ring!, reader));
  }

  /** Where the next block may be decoded in place (saves one copy), or null. */
  nextBlockArrays(): readonly Float32Array[] | null {
    return this.ring?.channelDataFor(this.pushed) ?? null;
  }

  async push(block: PcmBlock): Promise<void> {
    if (block.channelData.length !== this.info.channels) {
      throw new RangeError(`block has ${block.channelData.length} channels, stream has ${this.info.channels}`);
    }
    const envelope = this.envelopes.build(block);
    const shared: PcmBlock = { ...block, envelope };
    // Publish first, so the meter threads run while this thread runs its own meters.
    this.ring?.publish(this.pushed, block, envelope);
    this.pushed++;
    this.main.push(shared);
    // The speech meter only queues in push: classify this block's frames now, as the one-thread
    // path does, or they pile up unclassified and the reading finds no speech.
    await this.main.settle();
    // The next block's slot must be free before anyone writes it (the decoder may write it in place).
    await this.ring?.waitWritable(this.pushed, this.threads.length, this.checkThreads);
  }

  private readonly checkThreads = (): void => {
    for (const t of this.threads) t.check();
  };

  async result(): Promise<Measurements> {
    this.ring?.finish();
    const parts = [
      this.main.partialResult(),
      ...(await Promise.all(this.threads.map((t) => t.result()))),
    ] as Partial<Measurements>[];
    const merged: Partial<Measurements> = { frames: parts[0].frames };
    // Fields in the serial runner's order, so the two serialise identically.
    for (const name of METER_NAMES) take(merged, name, parts);
    if (!isCompleteMeasurements(merged))
      throw new EarmarkError('internal_error', 'the analysis threads returned no result for some meter');
    return merged;
  }

  async close(): Promise<void> {
    this.ring?.finish(true);
    await Promise.all(this.threads.map((t) => t.close()));
  }
}
