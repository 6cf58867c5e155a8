// The sandboxed processor: BullMQ runs this file in a child process, so a decoder crash or an
// out-of-memory ends the child, not the worker, and the worker's lock renewal never waits on
// the CPU-bound analysis. Codes the catalogue marks not retryable fail at once (UnrecoverableError);
// the rest are retried with backoff.

import { UnrecoverableError, type SandboxedJob } from 'bullmq';
import { stat } from 'node:fs/promises';
import { analyzeFile } from '../engine/analyze-file.ts';
import { isRetryable, toEarmarkError } from '../errors/index.ts';
import { UrlPolicy } from '../net/url-guard.ts';
import { analysisOptionsForProfile, decodeOptionsForProfile, evaluate } from '../profiles/index.ts';
import { ANALYZE_JOB_V1, encodeFailure, type AnalyzeJobV1, type AnalyzeResultV1 } from '../queue/contract.ts';
import { openStorage, type LocalCopy, type Storage } from '../storage/index.ts';
import { readChildSettings } from './child-settings.ts';
import { fetchSource } from './fetch-source.ts';
import { readThreadBudget, threadsForFile } from './thread-policy.ts';

const config = readChildSettings();
// A worker killed with SIGKILL leaves this child behind: without it the analysis would go on
// unowned (burning a core, writing a report) while another worker redoes the job.
if (process.send) process.once('disconnect', () => process.exit(1));
const policy = new UrlPolicy(config.urlAllowlist);
/** Progress at most this often: each report is an IPC message and a Redis script in the worker, and a short job needs none. */
const PROGRESS_EVERY_MS = 250;

/**
 * BullMQ reuses a sandboxed child for job after job, and memory a child took (V8 heap, decoder
 * WebAssembly memories, the C heap) is rarely handed back. A child above the limit after its job
 * asks to be replaced with SIGTERM to itself: BullMQ's handler in the child awaits the job's
 * result message (written to the IPC pipe) and then exits, and the pool forks a fresh child for
 * the next job. Exiting here directly could drop that message.
 */
function retireIfGrown(): void {
  const rssMb = process.memoryUsage.rss() / 1024 ** 2;
  if (rssMb > config.childRssLimitMb) process.kill(process.pid, 'SIGTERM');
}

// The object-store backend copies the audio to a bounded temp file: the decoders read with
// random access (storage/s3.ts). Uploads and fetched files share one bound, the larger limit.
const openJobStorage = () =>
  openStorage(config.storage, config.storageDir, {
    copyLimitBytes: Math.max(config.uploadLimitBytes, config.fetchLimitBytes),
  });
/** One S3 client for the child's life (its connections are reused from job to job); the
 * directory is opened per job, which makes its folders again if they went. */
let s3Storage: Promise<Storage> | null = null;
function jobStorage(): Promise<Storage> {
  if (config.storage.kind === 'file') return openJobStorage();
  s3Storage ??= openJobStorage().catch((error: unknown) => {
    s3Storage = null;
    throw error;
  });
  return s3Storage;
}

export default async function analyzeJob(job: SandboxedJob<AnalyzeJobV1, AnalyzeResultV1>): Promise<AnalyzeResultV1> {
  if (job.name !== ANALYZE_JOB_V1)
    throw new UnrecoverableError(encodeFailure('invalid_argument', `this worker does not know job name ${job.name}`));
  const started = performance.now();
  const storage = await jobStorage();
  const data = job.data;
  let fetchedKey: string | null = null;
  let sourceKey = '';
  let copy: LocalCopy | null = null;
  let path = '';
  let fileName = 'the file';
  let knownSha256: string | undefined;
  try {
    if (data.source.kind === 'upload') {
      sourceKey = data.source.storageKey;
      copy = await storage.localCopy(sourceKey);
      path = copy.path;
      fileName = data.source.fileName;
      // A temp copy's hash is of the bytes analysed, taken as they were copied.
      knownSha256 = copy.sha256 ?? data.source.sha256;
    } else if (data.source.url.startsWith('s3://')) {
      // Read straight from its bucket (checked again here): nothing is kept, so it has no excerpts.
      copy = await storage.copySource(data.source.url, config.fetchLimitBytes);
      path = copy.path;
      knownSha256 = copy.sha256 ?? undefined;
      fileName = decodeURIComponent(new URL(data.source.url).pathname.split('/').pop() || 'source');
    } else {
      const fetched = await fetchSource(
        policy,
        storage,
        data.source.url,
        config.fetchLimitBytes,
        config.fetchTimeoutMs,
        config.fetchDeadlineMs,
      );
      fetchedKey = fetched.key;
      sourceKey = fetched.key;
      copy = await storage.localCopy(fetched.key);
      path = copy.path;
      knownSha256 = fetched.sha256;
      fileName = decodeURIComponent(new URL(data.source.url).pathname.split('/').pop() || 'source');
    }
    let lastPercent = -1;
    let lastProgressAt = performance.now();
    // A missing file is analyzeFile's typed error to raise: size 0 here means one thread.
    const sizeBytes = await stat(path).then(
      (s) => s.size,
      () => 0,
    );
    const doc = await analyzeFile(path, {
      threads: threadsForFile(readThreadBudget(job), sizeBytes),
      analysis: analysisOptionsForProfile(data.profile),
      displayName: fileName,
      decode: { maxDecodedSeconds: config.maxDecodedSeconds, ...decodeOptionsForProfile(data.profile) },
      ...(knownSha256 ? { knownSha256 } : {}),
      onProgress: (fraction) => {
        const percent = Math.floor(fraction * 100);
        const now = performance.now();
        if (percent > lastPercent && now - lastProgressAt >= PROGRESS_EVERY_MS) {
          lastPercent = percent;
          lastProgressAt = now;
          void job.updateProgress(percent);
        }
      },
    });
    const report = evaluate(data.profile, doc);
    const reportKey = await storage.writeReport(job.id ?? 'unknown', JSON.stringify(report));
    // The fetched copy now stays until the retention sweep, like an upload, for listening excerpts.
    fetchedKey = null;
    return {
      verdict: report.verdict,
      reportKey,
      analysisSeconds: (performance.now() - started) / 1000,
      integratedLufs: report.summary.integratedLufs,
      truePeakDbtp: report.summary.truePeakDbtp,
      headline: report.headline,
      sourceKey,
    };
  } catch (thrown) {
    const error = toEarmarkError(thrown);
    const transient = isRetryable(error);
    // Decoder messages name the file by path: clients and logs get the client's file name instead.
    const scrub = (text: string) =>
      path
        ? text.split(`"${path}"`).join(fileName).split(path).join(fileName).split(config.storageDir).join('storage')
        : text;
    const details = Object.fromEntries(
      Object.entries(error.details).map(([key, value]) => [key, typeof value === 'string' ? scrub(value) : value]),
    );
    const reason =
      error.code === 'internal_error'
        ? encodeFailure(error.code, 'the analysis failed unexpectedly')
        : encodeFailure(error.code, scrub(error.message), details);
    if (!transient) throw new UnrecoverableError(reason);
    throw new Error(reason);
  } finally {
    // A fetched copy of a failed job is ours alone; an upload stays until the retention sweep.
    if (fetchedKey) await storage.remove(fetchedKey).catch(() => undefined);
    await copy?.release().catch(() => undefined);
    retireIfGrown();
  }
}
