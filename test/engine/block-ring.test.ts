// The shared block ring of the parallel runner: what a reader sees is what was published, a
// writer waits for the slowest reader and gives up when told a reader failed, and readers stop
// at the end or on cancellation. (test/engine/parallel-equivalence.test.ts reads it from real threads.)
import { afterAll, describe, expect, it } from 'vitest';
import { defaultChannelLabels } from '../../src/analysis/audio.ts';
import { EnvelopeBuilder } from '../../src/analysis/envelope.ts';
import { BlockRing, createRing, RING_SLOTS } from '../../src/engine/block-ring.ts';
import { ParallelAnalysisRunner } from '../../src/engine/parallel-runner.ts';

const block = (frames: number, seed: number) => {
  const channelData = [0, 1].map((c) =>
    Float32Array.from({ length: frames }, (_, i) => Math.sin(seed + i * (0.01 + c * 0.003))),
  );
  return { channelData, frames };
};

describe('block ring', () => {
  it('hands a reader the published samples and envelope, whole and partial blocks, over several laps', () => {
    const ring = new BlockRing(createRing(2, 1000, true));
    const reader = new BlockRing(ring.shape);
    const envelopes = new EnvelopeBuilder();
    for (let index = 0; index < 3 * RING_SLOTS; index++) {
      const frames = index % 3 === 2 ? 333 : 1000;
      const written = block(frames, index);
      const envelope = envelopes.build(written);
      ring.publish(index, written, envelope);
      expect(reader.waitReadable(index)).toBe(true);
      const read = reader.block(index);
      expect(read.frames).toBe(frames);
      expect(read.channelData.map((x) => Array.from(x))).toEqual(written.channelData.map((x) => Array.from(x)));
      expect(read.envelope!.chunks).toBe(Math.ceil(frames / 32));
      for (let c = 0; c < 2; c++) {
        expect(Array.from(read.envelope!.maxAbs[c].subarray(0, read.envelope!.chunks))).toEqual(
          Array.from(envelope.maxAbs[c].subarray(0, envelope.chunks)),
        );
        expect(Array.from(read.envelope!.minAbs[c].subarray(0, read.envelope!.chunks))).toEqual(
          Array.from(envelope.minAbs[c].subarray(0, envelope.chunks)),
        );
      }
      expect(Array.from(read.envelope!.blockMaxAbs)).toEqual(Array.from(envelope.blockMaxAbs));
      reader.release(0, index);
    }
  });

  it('does not copy samples a decoder already wrote into the slot', () => {
    const ring = new BlockRing(createRing(2, 64, false));
    const inPlace = ring.channelDataFor(0);
    inPlace.forEach((x, c) => x.fill(c + 0.5));
    ring.publish(0, { channelData: inPlace, frames: 64 }, undefined);
    expect(Array.from(new BlockRing(ring.shape).block(0).channelData[1])).toEqual(new Array(64).fill(1.5));
  });

  it('refuses a block larger than its slots', () => {
    const ring = new BlockRing(createRing(2, 100, false));
    expect(() => ring.publish(0, block(101, 0), undefined)).toThrow(RangeError);
  });

  it('tells readers when the stream ends and when the run is cancelled', () => {
    const ended = new BlockRing(createRing(1, 8, false));
    ended.publish(0, { channelData: [new Float32Array(8)], frames: 8 }, undefined);
    ended.finish();
    expect([ended.waitReadable(0), ended.waitReadable(1)]).toEqual([true, false]);
    const cancelled = new BlockRing(createRing(1, 8, false));
    cancelled.publish(0, { channelData: [new Float32Array(8)], frames: 8 }, undefined);
    cancelled.finish(true);
    expect(cancelled.waitReadable(0)).toBe(false);
  });

  it('lets the writer run RING_SLOTS - 1 blocks ahead, then waits for the slowest reader', async () => {
    const ring = new BlockRing(createRing(1, 8, false));
    const one = { channelData: [new Float32Array(8)], frames: 8 };
    for (let i = 0; i < RING_SLOTS; i++) ring.publish(i, one, undefined);
    let writable = false;
    const waiting = ring
      .waitWritable(RING_SLOTS, 2, () => {})
      .then(() => {
        writable = true;
      });
    ring.release(0, 0);
    await new Promise((r) => setTimeout(r, 20));
    expect(writable).toBe(false); // reader 1 still holds block 0
    ring.release(1, 0);
    await waiting;
    expect(writable).toBe(true);
  });

  it('stops a waiting writer with the failure its check reports', async () => {
    const ring = new BlockRing(createRing(1, 8, false));
    const one = { channelData: [new Float32Array(8)], frames: 8 };
    for (let i = 0; i < RING_SLOTS; i++) ring.publish(i, one, undefined);
    let failed = false;
    const waiting = ring.waitWritable(RING_SLOTS, 1, () => {
      if (failed) throw new Error('reader failed');
    });
    failed = true;
    ring.wakeWriter(0);
    await expect(waiting).rejects.toThrow('reader failed');
  });
});

describe('parallel runner shutdown', () => {
  const open: ParallelAnalysisRunner[] = [];
  afterAll(async () => {
    await Promise.all(open.map((r) => r.close()));
  });

  it('closes mid-stream without a result and without hanging its threads', async () => {
    const runner = new ParallelAnalysisRunner(
      { sampleRate: 48_000, channels: 2, channelLabels: defaultChannelLabels(2) },
      {},
      2,
      { maxBlockFrames: 4096 },
    );
    open.push(runner);
    for (let i = 0; i < 10; i++) await runner.push(block(4096, i));
    // A hang here fails on the test's timeout: the readers stop on the cancel mark.
    await expect(runner.close()).resolves.toBeUndefined();
    await expect(runner.result()).rejects.toThrow();
  }, 30_000);

  it('a meter thread that dies mid-stream fails the analysis with internal_error instead of hanging it', async () => {
    const runner = new ParallelAnalysisRunner(
      { sampleRate: 48_000, channels: 2, channelLabels: defaultChannelLabels(2) },
      {},
      2,
      { maxBlockFrames: 4096 },
    );
    open.push(runner);
    await runner.push(block(4096, 0));
    // The worker thread ends as if it had crashed (terminated from outside, no result posted).
    await (runner as unknown as { threads: { close(): Promise<number> }[] }).threads[0].close();
    const pushing = (async () => {
      for (let i = 1; i < 50; i++) await runner.push(block(4096, i));
    })();
    await expect(pushing).rejects.toMatchObject({ code: 'internal_error' });
    await expect(runner.result()).rejects.toMatchObject({ code: 'internal_error' });
  }, 30_000);

  it('refuses a block larger than it was sized for', async () => {
    const runner = new ParallelAnalysisRunner(
      { sampleRate: 48_000, channels: 2, channelLabels: defaultChannelLabels(2) },
      {},
      2,
      { maxBlockFrames: 1024 },
    );
    open.push(runner);
    await expect(runner.push(block(1025, 0))).rejects.toThrow(RangeError);
  }, 30_000);
});
