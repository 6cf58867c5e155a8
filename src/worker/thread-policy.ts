// How many threads one job's analysis gets. Threads split whole meters (engine/parallel-runner.ts),
// which shortens one file but costs a thread start and the shared ring's hand-offs. While other
// jobs run or wait, one thread per job already keeps every core busy on whole jobs, so the split
// only pays when the worker would otherwise leave a core idle, and only for a file long enough
// to pay for the thread's start.
//
// The worker (parent) knows what else runs and waits, so it sets the budget; the sandboxed child,
// which has the file, applies the length bound.

export interface ThreadBudgetInput {
  /** Most threads one analysis may use (EARMARK_ANALYSIS_THREADS: the cores by default). */
  maxThreads: number;
  /** Other analysis jobs this worker process runs now. */
  otherActiveJobs: number;
  /** Jobs in the queue ready to run (any worker of the queue may take them). */
  waitingJobs: number;
}

/** Threads the next job may use: all of them only when it is alone, else one. */
export function threadBudget({ maxThreads, otherActiveJobs, waitingJobs }: ThreadBudgetInput): number {
  if (otherActiveJobs > 0 || waitingJobs > 0) return 1;
  return Math.max(1, Math.floor(maxThreads));
}

/**
 * Below this size one thread is as fast. The split saves about 20 ms per minute of 48 kHz stereo
 * 24-bit audio (17.3 MB a minute; 60 minutes take 3.16-3.38 s on one thread and 1.95-2.10 s on
 * two on an idle machine, BENCHMARKS.md); a bundled meter thread's start measured 60-130 ms on
 * 30- and 60-second files with the machine's cores shared (less idle), so the split pays from
 * about 3-6 minutes of such audio, and 48 MiB is the low end. Compressed files hold more audio
 * per byte and pay sooner, so the bound errs on the side of one thread for them.
 */
export const MIN_THREADED_BYTES = 48 * 1024 * 1024;

/** Threads for one file within the budget the worker gave. */
export function threadsForFile(budget: number, sizeBytes: number, minBytes = MIN_THREADED_BYTES): number {
  if (!Number.isSafeInteger(budget) || budget < 2) return 1;
  return sizeBytes >= minBytes ? budget : 1;
}

/** The budget the worker attached to the sandboxed job (see runtime.ts); 1 when absent or malformed. */
export function readThreadBudget(job: object): number {
  const value: unknown = 'analysisThreads' in job ? job.analysisThreads : undefined;
  return typeof value === 'number' && Number.isSafeInteger(value) && value >= 1 && value <= 64 ? value : 1;
}
