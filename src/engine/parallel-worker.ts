// Worker thread of the parallel runner: runs its group of whole meters on each block of the shared
// ring in turn, releases the block, and posts the group's results once the stream has ended.
// It sleeps on the ring between blocks (no event-loop turn per block).
import { parentPort, workerData } from 'node:worker_threads';
import type { StreamInfo } from '../analysis/audio.ts';
import { AnalysisRunner, type AnalysisOptions, type MeterName } from '../analysis/runner.ts';
import { toWireError, type WireError } from '../errors/index.ts';
import { BlockRing, type RingShape } from './block-ring.ts';

export interface MeterThreadData {
  info: StreamInfo;
  options: AnalysisOptions;
  meters: MeterName[];
  ring: RingShape;
  /** This thread's index among the ring's readers. */
  reader: number;
}

export type FromWorker = { type: 'result'; result: Record<string, unknown> } | { type: 'error'; error: WireError };

/** Every published block through this thread's meters; null when the run was cancelled. */
function meterAll({ info, options, meters, ring: shape, reader }: MeterThreadData): Record<string, unknown> | null {
  const runner = new AnalysisRunner(info, options, meters);
  const ring = new BlockRing(shape);
  for (let index = 0; ring.waitReadable(index); index++) {
    runner.push(ring.block(index));
    ring.release(reader, index);
  }
  return ring.cancelled ? null : runner.partialResult();
}

/** The parent builds this object; the check keeps a wrong start from reading a ring that is not one. */
function isMeterThreadData(value: unknown): value is MeterThreadData {
  if (!value || typeof value !== 'object') return false;
  const v: Partial<Record<keyof MeterThreadData, unknown>> = value;
  const ring: unknown = v.ring;
  return (
    !!v.info &&
    typeof v.info === 'object' &&
    !!v.options &&
    typeof v.options === 'object' &&
    Array.isArray(v.meters) &&
    Number.isInteger(v.reader) &&
    !!ring &&
    typeof ring === 'object' &&
    'buffer' in ring &&
    ring.buffer instanceof SharedArrayBuffer
  );
}

const port = parentPort!;
try {
  if (!isMeterThreadData(workerData)) throw new Error('the meter thread was started without its ring and meters');
  const result = meterAll(workerData);
  if (result) port.postMessage({ type: 'result', result } satisfies FromWorker);
} catch (error) {
  port.postMessage({ type: 'error', error: toWireError(error) } satisfies FromWorker);
}
