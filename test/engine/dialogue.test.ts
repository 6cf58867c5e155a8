// Dialogue loudness end to end: espeak-ng speech over a music bed (fixtures/dialogue-corpus.ts),
// written as WAV and read by analyzeFile with the real speech model (Silero VAD), against the
// item's truth; the same figures with one thread and two. The parallel runner's main-thread
// speech meter is also checked with a fake classifier, so that part runs without espeak-ng.

import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildItem, CORPUS_SAMPLE_RATE, type CorpusItem, type ItemPlan } from '../../fixtures/dialogue-corpus.ts';
import type { StreamInfo } from '../../src/analysis/audio.ts';
import { AnalysisRunner, type AnalysisOptions } from '../../src/analysis/runner.ts';
import type { SpeechClassifier } from '../../src/analysis/speech/meter.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import type { AnalysisDocument } from '../../src/engine/document.ts';
import { ParallelAnalysisRunner } from '../../src/engine/parallel-runner.ts';
import { cut, testSignals } from '../helpers/test-signals.ts';
import { hasTool } from '../helpers/tools.ts';

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'earmark-dialogue-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

const SPEECH: AnalysisOptions = { speech: { enabled: true } };

/** A fake detector that answers from the frame's content: speech when its mean square is high. */
function energyClassifier(): SpeechClassifier {
  return {
    name: 'fake-detector',
    frameSamples: 512,
    async classify(samples) {
      const out = new Float32Array(samples.length / 512);
      for (let f = 0; f < out.length; f++) {
        let sum = 0;
        for (let i = f * 512; i < (f + 1) * 512; i++) sum += samples[i] * samples[i];
        out[f] = sum / 512 > 1e-3 ? 0.9 : 0.1;
      }
      await new Promise((resolve) => setTimeout(resolve, 0));
      return out;
    },
  };
}

describe('the parallel runner and the speech meter', () => {
  it('classifies every frame on the decoding thread, as the one-thread runner does', async () => {
    const info: StreamInfo = { sampleRate: 48000, channels: 2, channelLabels: ['L', 'R'] };
    // Programme with gaps of silence: both speech and non-speech frames.
    const { gaps } = testSignals(2, 6);
    const serial = new AnalysisRunner(info, SPEECH, undefined, { speechClassifier: energyClassifier() });
    for (const block of cut(gaps, [4097, 1, 7, 19999])) {
      serial.push(block);
      await serial.settle();
    }
    const parallel = new ParallelAnalysisRunner(info, SPEECH, 2, {}, { speechClassifier: energyClassifier() });
    try {
      for (const block of cut(gaps, [4097, 1, 7, 19999])) await parallel.push(block);
      const expected = serial.result().speech;
      // 6 s at 48 kHz: 95999 samples at 16 kHz, 187 whole frames of 512, some of each kind.
      expect(expected.frameIsSpeech).toHaveLength(187);
      expect(expected.frameIsSpeech).toContain(0);
      expect(expected.frameIsSpeech).toContain(1);
      expect((await parallel.result()).speech).toEqual(expected);
    } finally {
      await parallel.close();
    }
  });
});

const figures = (doc: AnalysisDocument) => ({ dialogue: doc.dialogue, speech: doc.series.speech });

describe.skipIf(!hasTool('espeak-ng'))('dialogue loudness of corpus items (espeak-ng, Silero VAD)', () => {
  const plans: ItemPlan[] = [
    {
      name: 'speech-12db',
      seconds: 14,
      bed: 'music',
      speechAboveBedDb: 12,
      speech: true,
      gapSeconds: [0.4, 1.5],
      seed: 31,
    },
    {
      name: 'speech-6db',
      seconds: 14,
      bed: 'music',
      speechAboveBedDb: 6,
      speech: true,
      gapSeconds: [0.4, 1.5],
      seed: 32,
    },
  ];

  // Each item spoken and written once (espeak-ng takes about a second an item).
  const made = new Map<string, Promise<{ item: CorpusItem; file: string }>>();
  function written(plan: ItemPlan): Promise<{ item: CorpusItem; file: string }> {
    let out = made.get(plan.name);
    if (!out) {
      const item = buildItem(plan);
      const file = join(dir, `${plan.name}.wav`);
      const format = { sampleRate: CORPUS_SAMPLE_RATE, channels: 1, bitsPerSample: 32, float: true };
      out = writeWavFile(file, format, [[item.mix]]).then(() => ({ item, file }));
      made.set(plan.name, out);
    }
    return out;
  }

  for (const plan of plans) {
    it(`reads ${plan.name} within 1 LU of the truth, the same with two threads`, async () => {
      const { item, file } = await written(plan);
      const { truth } = item;
      const one = await analyzeFile(file, { threads: 1, analysis: SPEECH });
      const d = one.dialogue;
      expect(d.measured).toBe(true);
      expect(d.detector).toBe('silero-vad-v5');
      expect(d.measurable).toBe(true);
      // The accuracy target: dialogue loudness within 1 LU of the truth (the dialogue-gated
      // loudness of the blocks lying mostly in placed speech, fixtures/dialogue-truth.ts).
      expect(truth.dialogueLufs).not.toBeNull();
      expect(Math.abs((d.dialogueLufs ?? Number.NaN) - (truth.dialogueLufs ?? Number.NaN))).toBeLessThan(1);
      expect(Math.abs((d.speechSharePercent ?? Number.NaN) - truth.speechSharePercent)).toBeLessThan(10);
      expect(d.programmeBlocks).toBe(truth.blockCount);
      // LDR is the document's programme loudness minus the dialogue loudness.
      expect(d.loudnessToDialogueLu).toBeCloseTo((one.summary.integratedLufs ?? Number.NaN) - (d.dialogueLufs ?? 0), 9);
      expect(one.series.speech?.isSpeech).toHaveLength(truth.blockCount);
      // Two threads: the detector stays on the decoding thread; every figure exactly the same.
      const two = await analyzeFile(file, { threads: 2, analysis: SPEECH });
      expect(figures(two)).toEqual(figures(one));
    });
  }

  it('finds music alone not measurable, with either thread count', async () => {
    const { item, file } = await written({
      name: 'music-only',
      seconds: 12,
      bed: 'music',
      speechAboveBedDb: null,
      speech: false,
      gapSeconds: [0, 0],
      seed: 33,
    });
    expect(item.truth.speechBlockCount).toBe(0);
    const one = await analyzeFile(file, { threads: 1, analysis: SPEECH });
    expect(one.dialogue.measured).toBe(true);
    expect(one.dialogue.measurable).toBe(false);
    expect(one.dialogue.dialogueLufs).toBeNull();
    expect(one.dialogue.loudnessToDialogueLu).toBeNull();
    expect(one.dialogue.speechSharePercent).toBeLessThan(one.dialogue.minimumSharePercent);
    expect(one.dialogue.note).toContain('under the');
    const two = await analyzeFile(file, { threads: 2, analysis: SPEECH });
    expect(figures(two)).toEqual(figures(one));
  });

  it('measures nothing when speech is not asked for', async () => {
    const { file } = await written(plans[0]);
    const doc = await analyzeFile(file, { threads: 1 });
    expect(doc.dialogue.measured).toBe(false);
    expect(doc.dialogue.dialogueLufs).toBeNull();
    expect(doc.series.speech).toBeNull();
  });
});
