// Worker thread of the parallel runner: runs its group of whole meters on the blocks it is sent,
// hands each block's buffers back for reuse, and posts the group's results at the end.
import { parentPort, workerData } from 'node:worker_threads';
import type { StreamInfo } from '../analysis/audio.ts';
import { AnalysisRunner, type AnalysisOptions, type MeterName } from '../analysis/runner.ts';

export type ToWorker = { type: 'block'; frames: number; buffers: ArrayBuffer[] } | { type: 'end' };
export type FromWorker =
  | { type: 'done-block'; buffers: ArrayBuffer[] }
  | { type: 'result'; result: Record<string, unknown> }
  | { type: 'error'; message: string };

const { info, options, meters } = workerData as { info: StreamInfo; options: AnalysisOptions; meters: MeterName[] };
const runner = new AnalysisRunner(info, options, meters);
const port = parentPort!;

port.on('message', (message: ToWorker) => {
  try {
    if (message.type === 'block') {
      const channelData = message.buffers.map((b) => new Float32Array(b, 0, message.frames));
      runner.push({ channelData, frames: message.frames });
      port.postMessage({ type: 'done-block', buffers: message.buffers } satisfies FromWorker, message.buffers);
    } else {
      port.postMessage({ type: 'result', result: runner.partialResult() } satisfies FromWorker);
    }
  } catch (error) {
    port.postMessage({ type: 'error', message: error instanceof Error ? error.message : String(error) } satisfies FromWorker);
  }
});
