// The job as clients see it: the report's headline travels with the verdict, so listings show it.
import type { Job } from 'bullmq';
import { describe, expect, it } from 'vitest';
import type { AnalyzeJobV1, AnalyzeResultV1 } from '../../src/queue/contract.ts';
import { jobView } from '../../src/queue/job-view.ts';

function fakeJob(returnvalue: AnalyzeResultV1 | null, failedReason?: string): Job<AnalyzeJobV1, AnalyzeResultV1> {
  return {
    id: 'j_abcdefghijklmnopqrstuv',
    timestamp: 1_700_000_000_000,
    processedOn: 1_700_000_001_000,
    finishedOn: 1_700_000_002_000,
    attemptsMade: 1,
    progress: 100,
    returnvalue,
    failedReason,
    data: {
      tenant: 'alpha',
      source: { kind: 'upload', storageKey: 'u/1', fileName: 'promo.wav', sizeBytes: 10 },
      profileId: 'podcast',
      profileVersion: '1',
      profile: {} as AnalyzeJobV1['profile'],
      callbackUrl: null,
      externalId: null,
      metadata: null,
      submittedAt: '2023-11-14T22:13:20.000Z',
    },
  } as unknown as Job<AnalyzeJobV1, AnalyzeResultV1>;
}

const result: AnalyzeResultV1 = {
  verdict: 'fail',
  reportKey: 'r/1',
  analysisSeconds: 0.2,
  integratedLufs: -23,
  truePeakDbtp: -1.5,
  sourceKey: 'u/1',
  headline: 'Damaged: audio ends at 00:00:05:00',
};

describe('jobView', () => {
  it('carries the report headline of a completed job', () => {
    expect(jobView(fakeJob(result), 'completed', [])).toMatchObject({
      state: 'completed',
      verdict: 'fail',
      headline: 'Damaged: audio ends at 00:00:05:00',
    });
  });

  it('has no headline before completion, after a failure, or for a result written before report v2', () => {
    expect(jobView(fakeJob(null), 'active', []).headline).toBeNull();
    expect(jobView(fakeJob(null, 'unsupported_format: not audio'), 'failed', [])).toMatchObject({
      headline: null,
      error: { code: 'unsupported_format', message: 'not audio' },
    });
    const { headline: _dropped, ...older } = result;
    expect(jobView(fakeJob(older), 'completed', []).headline).toBeNull();
  });
});
