// One file, one pass: decode blocks and feed them to every meter, hashing the bytes the decoder reads.

import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { stat } from 'node:fs/promises';
import { basename } from 'node:path';
import { setImmediate as nextTurn } from 'node:timers/promises';
import { AnalysisRunner, type AnalysisOptions, type Measurements, type MeterContext } from '../analysis/runner.ts';
import { ParallelAnalysisRunner } from './parallel-runner.ts';
import { decodeCostFor, threadsFor, type ThreadChoice } from './thread-plan.ts';
import { openAudioFile } from '../decode/index.ts';
import { FileHash } from '../decode/file-hash.ts';
import { DEFAULT_MAX_BLOCK_FRAMES, type DecodeOptions } from '../decode/types.ts';
import { EarmarkError } from '../errors/index.ts';
import { buildAnalysisDocument, type AnalysisDocument } from './document.ts';
import { sileroClassifier, speechRuntime } from './speech-model.ts';

export interface AnalyzeFileOptions {
  analysis?: AnalysisOptions;
  decode?: DecodeOptions;
  /** Name to report instead of the path's base name (the service stores uploads under generated names). */
  displayName?: string;
  /** Compute the file's SHA-256 (from the bytes decoding reads; see FileHash). Default true. */
  hash?: boolean;
  /** The file's SHA-256 as already known (the service hashed the upload as it stored it): reported, not recomputed. */
  knownSha256?: string;
  /** Called with 0..1 as decoding proceeds, at most every ~5 % when the length is known. */
  onProgress?: (fraction: number) => void;
  signal?: AbortSignal;
  /** Threads to spread the meters over (whole meters per thread; same readings), or `auto`
   * (thread-plan.ts). Default 1. */
  threads?: ThreadChoice;
}

async function sha256File(path: string): Promise<string> {
  const hash = createHash('sha256');
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 })) hash.update(chunk as Buffer);
  return hash.digest('hex');
}

/** The digest from the decoder's reads; a file that changed while read is hashed again as it is now. */
async function digest(fileHash: FileHash, path: string): Promise<string | undefined> {
  const fromDecode = await fileHash.digest().catch(() => null);
  return fromDecode ?? sha256File(path).catch(() => undefined);
}

export async function analyzeFile(path: string, options: AnalyzeFileOptions = {}): Promise<AnalysisDocument> {
  const started = performance.now();
  const maxBlockFrames = options.decode?.maxBlockFrames ?? DEFAULT_MAX_BLOCK_FRAMES;
  const fileHash = options.knownSha256 === undefined && options.hash !== false ? new FileHash(path) : null;
  // With threads the decoder writes each block straight into the runner's shared ring; on one
  // thread into one reused set, since the runner is done with a block when push returns.
  let runner: AnalysisRunner | ParallelAnalysisRunner | null = null;
  let reused: Float32Array[] | null = null;
  const blockArrays = (): readonly Float32Array[] | null => {
    if (runner instanceof ParallelAnalysisRunner) return runner.nextBlockArrays();
    if (runner === null) return null;
    const { channels } = runner.info;
    reused ??= Array.from({ length: channels }, () => new Float32Array(maxBlockFrames));
    return reused;
  };
  const onBytes = fileHash?.onBytes;
  const decoded = await openAudioFile(path, { ...options.decode, blockArrays, ...(onBytes ? { onBytes } : {}) });
  const { format } = decoded;
  const info = {
    sampleRate: format.sampleRate,
    channels: format.channels,
    channelLabels: format.channelLabels,
    ...(format.frames ? { expectedFrames: format.frames } : {}),
  };
  const threads = threadsFor(options.threads, format);
  const context: MeterContext = options.analysis?.speech?.enabled
    ? { speechClassifier: sileroClassifier(await speechRuntime()) }
    : {};
  if (threads > 1) {
    const decodeCostMsPerMinute = decodeCostFor(format, (await stat(path)).size, fileHash !== null);
    runner = new ParallelAnalysisRunner(
      info,
      options.analysis,
      threads,
      { maxBlockFrames, decodeCostMsPerMinute },
      context,
    );
  } else runner = new AnalysisRunner(info, options.analysis, undefined, context);
  let measurements: Measurements;
  try {
    const expectedFrames = format.frames ?? 0;
    let nextProgress = 0.05;
    for await (const block of decoded.blocks) {
      if (options.signal?.aborted) throw new EarmarkError('cancelled', 'analysis was cancelled');
      await runner.push(block);
      if (runner instanceof AnalysisRunner) await runner.settle();
      // Decoding reads synchronously, so without a turn per block (about 1.5 ms of work) no abort,
      // IPC disconnect, progress message or timer would run until the file ends.
      await nextTurn();
      if (options.onProgress && expectedFrames > 0 && decoded.framesDecoded / expectedFrames >= nextProgress) {
        options.onProgress(Math.min(1, decoded.framesDecoded / expectedFrames));
        nextProgress += 0.05;
      }
    }
    // No frames is not an error here: the document's integrity says "no audio" and every verdict fails on it.
    measurements = await runner.result();
  } finally {
    if (runner instanceof ParallelAnalysisRunner) await runner.close();
  }
  const { size } = await stat(path);
  const sha256 = options.knownSha256 ?? (fileHash ? await digest(fileHash, path) : undefined);
  const file = { name: options.displayName ?? basename(path), sizeBytes: size, ...(sha256 ? { sha256 } : {}) };
  return buildAnalysisDocument(format, measurements, decoded.warnings, file, (performance.now() - started) / 1000);
}
