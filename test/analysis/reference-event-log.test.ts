// The shared result logic as the analysis document shows it: events kept up to a cap while the
// counts go on (a meter's own cap, and the document's MAX_DOCUMENT_EVENTS), and overs merged when
// at most the merge window plus one frame apart.
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyzeFile, type AnalyzeFileOptions } from '../../src/engine/analyze-file.ts';
import { MAX_DOCUMENT_EVENTS, type AnalysisDocument } from '../../src/engine/document.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { referenceClipping } from '../helpers/reference-meters/run-reference.ts';
import { referenceTruePeak } from '../helpers/reference-meters/peak-reference.ts';

const RATE = 48_000;
let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'earmark-event-log-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function analyse(name: string, x: Float32Array, options: AnalyzeFileOptions = {}): Promise<AnalysisDocument> {
  const path = join(dir, `${name}.wav`);
  await writeWavFile(path, { sampleRate: RATE, channels: 1, bitsPerSample: 32, float: true }, [[x]]);
  return analyzeFile(path, { hash: false, ...options });
}

/** Three full-scale samples every 16 frames for 2 s: 6000 clip runs (the default minimum is 3). */
function manyClipRuns(): Float32Array {
  return Float32Array.from({ length: 2 * RATE }, (_, i) => (i % 16 < 3 ? 1 : 0));
}

const startOrder = (
  a: { startFrame: number; channel: number | null },
  b: { startFrame: number; channel: number | null },
) => a.startFrame - b.startFrame || (a.channel ?? -1) - (b.channel ?? -1);

describe('event caps: counts go on past the kept events', () => {
  it(`the document keeps the first ${MAX_DOCUMENT_EVENTS} events in start order and counts every one`, async () => {
    const x = manyClipRuns();
    const doc = await analyse('many-runs', x);
    const runs = referenceClipping([x], 10 ** (-0.01 / 20), 3);
    expect(runs.length).toBe(6000);
    expect(doc.events.length).toBe(MAX_DOCUMENT_EVENTS);
    expect(doc.eventsTruncated).toBe(true);
    expect(doc.eventCounts.clipping).toBe(6000);
    expect(doc.summary.clippingRuns).toBe(6000);
    expect(doc.summary.clippedSamples).toBe(18_000);
    expect([...doc.events].sort(startOrder)).toEqual(doc.events);
    // The kept clipping events are the earliest runs, none skipped.
    const kept = doc.events.filter((e) => e.kind === 'clipping').map((e) => [e.startFrame, e.endFrame]);
    expect(kept).toEqual(runs.slice(0, kept.length).map((r) => [r.startFrame, r.endFrame]));
    expect(kept.length).toBeGreaterThan(MAX_DOCUMENT_EVENTS - 10);
  }, 30_000);

  it("a meter's own cap keeps its first events; the count, the summary and the truncation flag go on", async () => {
    const doc = await analyse('capped-runs', manyClipRuns(), { analysis: { clipping: { maxEvents: 7 } } });
    const kept = doc.events.filter((e) => e.kind === 'clipping');
    expect(kept.map((e) => e.startFrame)).toEqual([0, 16, 32, 48, 64, 80, 96]);
    expect(kept.every((e) => e.count === 3 && e.endFrame === e.startFrame + 3)).toBe(true);
    expect(doc.eventCounts.clipping).toBe(6000);
    expect(doc.summary.clippingRuns).toBe(6000);
    expect(doc.channels[0].clippingRuns).toBe(6000);
    expect(doc.eventsTruncated).toBe(true);
  }, 30_000);
});

describe('over events merge within the merge window', () => {
  // Lone full-scale impulses in silence: each gives Annex 2 overs at three frames (its own value
  // at the frame six before it, the 0.972 taps at the frame before it and at it, per the meter's
  // filter delay). 50 ms at 48 kHz is 2400 frames: an over at most 2401 frames after the last one
  // joins its event.
  const mergeFrames = 2400;
  const impulsesAt = (positions: number[]) => {
    const x = new Float32Array(RATE);
    for (const p of positions) x[p] = 1;
    return x;
  };

  it('overs 2401 frames apart are one event, 2402 apart two; counts and peaks per event', async () => {
    // First impulse's last over is at its own frame; the next one's first over is 6 frames before it.
    const first = 1_000,
      joined = first + mergeFrames + 1 + 6,
      apart = joined + mergeFrames + 2 + 6;
    const x = impulsesAt([first, joined, apart]);
    const doc = await analyse('overs', x, { analysis: { reconstructedPeak: { overCeilingDbtp: 10 } } });
    const overs = doc.events.filter((e) => e.kind === 'true_peak_over');
    expect(overs.map((e) => [e.startFrame, e.endFrame, e.count])).toEqual([
      [first - 6, joined + 1, 6],
      [apart - 6, apart + 1, 3],
    ]);
    for (const e of overs) expect(e.peakValue).toBe(0); // the impulse itself, 1.0
    expect(doc.summary.truePeakOvers).toBe(2);
    expect(doc.eventCounts.true_peak_over).toBe(2);
    // The reference's merge agrees.
    expect(referenceTruePeak([x], RATE, -1).overs.map((e) => [e.startFrame, e.endFrame, e.count])).toEqual(
      overs.map((e) => [e.startFrame, e.endFrame, e.count]),
    );
  }, 30_000);

  it('merged over events past the true-peak cap are counted, not kept', async () => {
    const x = impulsesAt([1_000, 10_000, 20_000, 30_000, 40_000]);
    const doc = await analyse('capped-overs', x, {
      analysis: { truePeak: { maxEvents: 2 }, reconstructedPeak: { maxEvents: 1 } },
    });
    expect(doc.events.filter((e) => e.kind === 'true_peak_over').map((e) => e.startFrame)).toEqual([994, 9_994]);
    expect([doc.summary.truePeakOvers, doc.eventCounts.true_peak_over]).toEqual([5, 5]);
    expect(doc.events.filter((e) => e.kind === 'reconstructed_over').length).toBe(1);
    expect([doc.summary.reconstructedOvers, doc.eventCounts.reconstructed_over]).toEqual([5, 5]);
    expect(doc.eventsTruncated).toBe(true);
  }, 30_000);
});
