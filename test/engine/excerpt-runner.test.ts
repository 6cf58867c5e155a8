// The service's excerpt threads (excerpt-runner.ts): the same WAV as cutting in process, typed
// errors carried across, a bounded number at once (503 beyond), ended on abort and on deadline.
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeWavFile } from '../../src/encode/wav.ts';
import { cutExcerpt } from '../../src/engine/excerpt.ts';
import { ExcerptRunner } from '../../src/engine/excerpt-runner.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-excerpt-runner-'));
const path = join(dir, 'ramp.wav');
const runners: ExcerptRunner[] = [];
const runner = (options: ConstructorParameters<typeof ExcerptRunner>[0] = {}) => {
  const r = new ExcerptRunner(options);
  runners.push(r);
  return r;
};

beforeAll(async () => {
  const frames = 20 * 48000;
  const blocks = (function* () {
    for (let start = 0; start < frames; start += 10_000) {
      const n = Math.min(10_000, frames - start);
      const left = Float32Array.from({ length: n }, (_, i) => (((start + i) % 1000) / 1000) * 0.5);
      yield [left, left.map((v) => -v)];
    }
  })();
  await writeWavFile(path, { sampleRate: 48000, channels: 2, bitsPerSample: 16, float: false }, blocks);
});

afterAll(async () => {
  await Promise.all(runners.map((r) => r.close()));
});

describe('ExcerptRunner', () => {
  it('returns the WAV the engine cuts in process, and typed errors', async () => {
    const r = runner();
    const threaded = await r.cut(path, 3.25, 5.75);
    const local = await cutExcerpt(path, 3.25, 5.75);
    expect([threaded.startSeconds, threaded.endSeconds, threaded.sampleRate, threaded.channels]).toEqual([
      3.25, 5.75, 48000, 2,
    ]);
    expect(Buffer.compare(Buffer.from(threaded.wav), Buffer.from(local.wav))).toBe(0);
    await expect(r.cut(path, 30, 31)).rejects.toMatchObject({ code: 'invalid_argument' });
    await expect(r.cut(join(dir, 'missing.wav'), 0, 1)).rejects.toMatchObject({ code: 'file_not_found' });
    expect(r.active).toBe(0);
  });

  it('runs at most `threads` at once, queues `queued`, refuses the rest with service_unavailable', async () => {
    const r = runner({ threads: 1, queued: 1 });
    const results = await Promise.allSettled([r.cut(path, 0, 1), r.cut(path, 1, 2), r.cut(path, 2, 3)]);
    expect(results.map((x) => x.status)).toEqual(['fulfilled', 'fulfilled', 'rejected']);
    expect((results[2] as PromiseRejectedResult).reason).toMatchObject({ code: 'service_unavailable' });
    expect(r.active).toBe(0);
  });

  it('ends the thread when the caller aborts, and on the deadline', async () => {
    const r = runner({ threads: 1, queued: 1 });
    const running = new AbortController();
    const waiting = new AbortController();
    const first = r.cut(path, 0, 1, running.signal);
    const second = r.cut(path, 1, 2, waiting.signal);
    // A thread needs far longer than this turn to start, so both are still pending.
    running.abort();
    waiting.abort();
    await expect(first).rejects.toMatchObject({ code: 'cancelled' });
    await expect(second).rejects.toMatchObject({ code: 'cancelled' });
    expect(r.active).toBe(0);
    await expect(runner({ deadlineMs: 1 }).cut(path, 0, 1)).rejects.toMatchObject({ code: 'service_unavailable' });
    // Nothing is left waiting: the runner serves the next excerpt.
    expect((await r.cut(path, 0, 1)).endSeconds).toBe(1);
  });
});
