// The defect journey: damaged deliveries uploaded to a real API with a real worker and Redis.
// A cut file never passes; every defect shows in the report as a flag with timecode and channel.

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { encodePcmFrames, wavHeader } from '../../src/encode/wav.ts';
import { writeDefectFile, type DefectFile, type DefectName } from '../helpers/defect-files.ts';
import { client, type Client } from './client.ts';
import { KEYS, startService, until, type TestService } from './harness.ts';

let service: TestService;
let api: Client;
const files = new Map<DefectName, DefectFile>();

interface ReportFlag {
  kind: string;
  severity: string;
  channelName: string;
  startSample: number;
  endSample: number;
  startTimecode: string;
  number: number;
  count: number;
}

async function run(path: string, profile: string) {
  const submit = await api.upload(path, { profile }, KEYS.alpha);
  expect(submit.status).toBe(202);
  const job = await until(async () => {
    const res = await api.get(`/v1/jobs/${submit.body.id}`, KEYS.alpha);
    return res.body.state === 'completed' || res.body.state === 'failed' ? res.body : null;
  });
  const report =
    job.state === 'completed' ? (await api.get(`/v1/jobs/${submit.body.id}/report`, KEYS.alpha)).body : null;
  return { job, report };
}

beforeAll(async () => {
  // The 30 s gap file is 8.6 MB of 24-bit stereo.
  service = await startService({ env: { EARMARK_UPLOAD_LIMIT_BYTES: String(16 * 1024 * 1024) } });
  api = client(service.url);
  for (const name of ['truncated', 'dropout', 'gap', 'clip', 'phase'] as const)
    files.set(name, await writeDefectFile(service.dir, name));
});

afterAll(async () => {
  await service?.close();
});

describe('defect journey', () => {
  it('a WAV with its second half missing completes with verdict fail and the cut first', async () => {
    const { job, report } = await run(files.get('truncated')!.path, 'ebu-r128');
    expect(job).toMatchObject({ state: 'completed', verdict: 'fail' });
    expect(report.headline).toMatch(/^FAIL: damaged file at 00:00:10:00/);
    expect(report.integrity.problems[0]).toMatchObject({ code: 'data_ends_early', atSample: 480000 });
    expect(report.flags[0]).toMatchObject({ kind: 'data_ends_early', severity: 'fail', number: 1 });
  });

  it('a 50-byte WAV (header and one frame) completes as a failing report, never a pass', async () => {
    const path = join(service.dir, 'tiny.wav');
    writeFileSync(
      path,
      Buffer.concat([
        wavHeader({ sampleRate: 48000, channels: 1, bitsPerSample: 16, float: false, frames: 1 }),
        encodePcmFrames([new Float32Array([0.5])], 16, false),
      ]),
    );
    const { job, report } = await run(path, 'ebu-r128');
    expect(job).toMatchObject({ state: 'completed', verdict: 'fail' });
    expect(report.integrity.problems.map((p: { code: string }) => p.code)).toEqual(['too_short']);
  });

  it('dropout, gap, clip and phase files: each defect is a flag with timecode and channel name', async () => {
    const dropout = files.get('dropout')!;
    const d = await run(dropout.path, 'delivery-broadcast-stereo');
    expect(d.job.verdict).toBe('fail');
    expect(d.report.flags.find((f: ReportFlag) => f.kind === 'dropout')).toMatchObject({
      severity: 'fail',
      channelName: '2 R',
      startSample: dropout.atSample,
      endSample: dropout.endSample,
      startTimecode: '00:00:08:00',
    });

    const gap = await run(files.get('gap')!.path, 'delivery-broadcast-stereo');
    expect(gap.job.verdict).toBe('warn');
    expect(gap.report.flags.find((f: ReportFlag) => f.kind === 'silence_gap')).toMatchObject({
      severity: 'warn',
      channelName: 'all',
      startTimecode: '00:00:08:00',
    });

    const clip = await run(files.get('clip')!.path, 'ebu-r128');
    const clips = clip.report.flags.filter((f: ReportFlag) => f.kind === 'clipping');
    expect(clips).toHaveLength(5);
    expect(clips[0]).toMatchObject({ severity: 'remark', channelName: '1 L', startTimecode: '00:00:05:00' });

    const phase = await run(files.get('phase')!.path, 'delivery-broadcast-stereo');
    expect(phase.job.verdict).toBe('warn');
    expect(phase.report.flags.find((f: ReportFlag) => f.kind === 'phase_problem')).toMatchObject({
      severity: 'warn',
      channelName: '1 L',
    });
  });
});
