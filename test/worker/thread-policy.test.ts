// The worker's choice of analysis threads: every core for a long file alone, one thread per job
// while other jobs run or wait, one thread for a file too short to pay for a thread's start.
import { describe, expect, it } from 'vitest';
import { MIN_THREADED_BYTES, readThreadBudget, threadBudget, threadsForFile } from '../../src/worker/thread-policy.ts';

describe('thread budget (the worker side)', () => {
  it('gives a job alone every thread allowed', () => {
    expect(threadBudget({ maxThreads: 2, otherActiveJobs: 0, waitingJobs: 0 })).toBe(2);
    expect(threadBudget({ maxThreads: 4, otherActiveJobs: 0, waitingJobs: 0 })).toBe(4);
  });

  it('gives one thread while another job of this worker runs', () => {
    expect(threadBudget({ maxThreads: 2, otherActiveJobs: 1, waitingJobs: 0 })).toBe(1);
  });

  it('gives one thread while jobs wait, so each core takes a whole job', () => {
    expect(threadBudget({ maxThreads: 2, otherActiveJobs: 0, waitingJobs: 1 })).toBe(1);
    expect(threadBudget({ maxThreads: 2, otherActiveJobs: 1, waitingJobs: 30 })).toBe(1);
  });

  it('never goes below one thread', () => {
    expect(threadBudget({ maxThreads: 1, otherActiveJobs: 0, waitingJobs: 0 })).toBe(1);
    expect(threadBudget({ maxThreads: 0, otherActiveJobs: 0, waitingJobs: 0 })).toBe(1);
  });
});

describe('threads for a file (the child side)', () => {
  it('splits a long file over the budget', () => {
    expect(threadsForFile(2, MIN_THREADED_BYTES)).toBe(2);
    // One hour of 48 kHz stereo 24-bit PCM: 48000 * 2 * 3 * 3600 bytes (closed form).
    expect(threadsForFile(2, 48_000 * 2 * 3 * 3600)).toBe(2);
  });

  it('keeps a file below the bound on one thread', () => {
    expect(threadsForFile(2, MIN_THREADED_BYTES - 1)).toBe(1);
    // 30 s of 48 kHz stereo 24-bit PCM.
    expect(threadsForFile(2, 48_000 * 2 * 3 * 30)).toBe(1);
  });

  it('uses one thread when the budget is one or not a whole number', () => {
    expect(threadsForFile(1, 10 * MIN_THREADED_BYTES)).toBe(1);
    expect(threadsForFile(1.5, 10 * MIN_THREADED_BYTES)).toBe(1);
    expect(threadsForFile(Number.NaN, 10 * MIN_THREADED_BYTES)).toBe(1);
  });

  it('takes the bound as a parameter', () => {
    expect(threadsForFile(2, 1000, 1000)).toBe(2);
    expect(threadsForFile(2, 999, 1000)).toBe(1);
  });
});

describe('the budget on the sandboxed job', () => {
  it('reads a whole number the worker attached', () => {
    expect(readThreadBudget({ id: '1', analysisThreads: 2 })).toBe(2);
  });

  it.each([
    ['absent', {}],
    ['a string', { analysisThreads: '2' }],
    ['zero', { analysisThreads: 0 }],
    ['fractional', { analysisThreads: 1.5 }],
    ['absurd', { analysisThreads: 1e9 }],
  ])('falls back to one thread when it is %s', (_, job) => {
    expect(readThreadBudget(job)).toBe(1);
  });
});
