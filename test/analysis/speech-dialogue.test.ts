// Dialogue-gated loudness from detector frames: the block mask against a plain count, and the
// reading against the corpus truth (fixtures/dialogue-truth.ts) and against closed forms, with a
// fake classifier through the real runner and loudness meter.

import { describe, expect, it } from 'vitest';
import type { PcmBlock } from '../../src/analysis/audio.ts';
import { integratedLufsFrom } from '../../src/analysis/loudness.ts';
import { AnalysisRunner } from '../../src/analysis/runner.ts';
import { dialogueReading, speechBlockMask } from '../../src/analysis/speech/dialogue.ts';
import type { SpeechClassifier, SpeechResult } from '../../src/analysis/speech/meter.ts';
import {
  blockPowers,
  dialogueTruth,
  gatedLoudnessOf,
  type SpeechInterval,
  speechBlocks,
} from '../../fixtures/dialogue-truth.ts';

const RATE = 48000;
const FRAME_SECONDS = 0.032;

/**
 * The plain rule, in whole milliseconds so no boundary rounds: block k is [100k, 100k + 400) ms
 * (ITU-R BS.1770-5 Annex 1: 400 ms blocks, one every 100 ms); frame i's centre is (i + 1/2) * frameMs;
 * speech when more than half the frames centred in the block are.
 */
function plainMask(frameIsSpeech: Uint8Array, frameMs: number, blockCount: number): number[] {
  const mask: number[] = [];
  for (let k = 0; k < blockCount; k++) {
    let inside = 0;
    let speech = 0;
    for (let i = 0; i < frameIsSpeech.length; i++) {
      const twiceCentreMs = (2 * i + 1) * frameMs;
      if (twiceCentreMs >= 2 * 100 * k && twiceCentreMs < 2 * (100 * k + 400)) {
        inside++;
        speech += frameIsSpeech[i];
      }
    }
    mask.push(inside > 0 && speech > inside / 2 ? 1 : 0);
  }
  return mask;
}

function seeded(seed: number): () => number {
  let s = seed;
  return () => {
    s = (s * 1103515245 + 12345) % 2 ** 31;
    return s / 2 ** 31;
  };
}

describe('speechBlockMask', () => {
  it('needs more than half of the 12 frames centred in block 0: 6 are not enough, 7 are', () => {
    // Block 0 is [0, 400) ms: centres 16, 48, ..., 368 ms (frames 0-11); frame 12's centre, 400 ms, is out.
    const frames = new Uint8Array(30);
    frames.fill(1, 0, 6);
    expect(speechBlockMask(frames, FRAME_SECONDS, 1)[0]).toBe(0);
    frames[6] = 1;
    expect(speechBlockMask(frames, FRAME_SECONDS, 1)[0]).toBe(1);
    // Frame 12 sits at the start of block 4 ([400, 800) ms), not at the end of block 0.
    const edge = new Uint8Array(30);
    edge.fill(1, 12, 19);
    const mask = speechBlockMask(edge, FRAME_SECONDS, 5);
    expect(mask[0]).toBe(0);
    // Block 4's centres: frames 12-24 (400 to 784 ms), 13 frames; 7 of them speech.
    expect(mask[4]).toBe(1);
  });

  it('agrees with the plain count on random runs of speech, at 32 ms and 30 ms frames', () => {
    const random = seeded(99);
    for (const frameMs of [32, 30]) {
      for (let trial = 0; trial < 20; trial++) {
        const frames = new Uint8Array(200 + Math.floor(random() * 200));
        // Runs of 1 to 20 frames, so blocks often sit near half speech.
        let speaking = random() < 0.5;
        for (let i = 0; i < frames.length; ) {
          const run = 1 + Math.floor(random() * 20);
          frames.fill(speaking ? 1 : 0, i, i + run);
          i += run;
          speaking = !speaking;
        }
        // Some blocks past the last frame: they hold fewer frames, then none.
        const blockCount = Math.ceil((frames.length * frameMs) / 100) + 2;
        expect(Array.from(speechBlockMask(frames, frameMs / 1000, blockCount))).toEqual(
          plainMask(frames, frameMs, blockCount),
        );
      }
    }
  });

  it('has no speech block without frames', () => {
    expect(Array.from(speechBlockMask(new Uint8Array(0), FRAME_SECONDS, 3))).toEqual([0, 0, 0]);
  });
});

// The synthetic programme, mono 48 kHz, 12 s: a noise bed at 0.05, "speech" (two tones) over it
// in three intervals; the last in a hole of the bed at 1/300 of the level, so the relative gate
// (ITU-R BS.1770-5 eq. (6)) must drop it from the dialogue reading. Interval edges are 50 ms off
// the half-block points, more than a frame (32 ms), so the frame majority and the truth's
// coverage rule pick the same blocks.
const SECONDS = 12;
const INTERVALS: SpeechInterval[] = [
  { startSeconds: 1.05, endSeconds: 4.05 },
  { startSeconds: 6.05, endSeconds: 8.55 },
  { startSeconds: 10.05, endSeconds: 11.55 },
];

function programme(speechAmplitude: number): { mix: Float32Array; stem: Float32Array } {
  const random = seeded(5);
  const mix = new Float32Array(SECONDS * RATE);
  const stem = new Float32Array(SECONDS * RATE);
  for (let i = 0; i < mix.length; i++) {
    const t = i / RATE;
    const hole = t >= 10 && t < 11.6;
    const bed = hole ? 0 : 0.05 * (2 * random() - 1);
    const iv = INTERVALS.findIndex((v) => t >= v.startSeconds && t < v.endSeconds);
    const level = iv < 0 ? 0 : iv === 2 ? speechAmplitude / 300 : speechAmplitude * (iv === 0 ? 1 : 0.6);
    stem[i] = level * (Math.sin(2 * Math.PI * 440 * t) + 0.5 * Math.sin(2 * Math.PI * 1800 * t));
    mix[i] = bed + stem[i];
  }
  return { mix, stem };
}

/** A classifier that knows where the speech is: frame f is speech when its centre lies inside. */
function knowingClassifier(intervals: readonly SpeechInterval[]): SpeechClassifier {
  let seen = 0;
  return {
    name: 'fake-detector',
    frameSamples: 512,
    async classify(samples) {
      const out = new Float32Array(samples.length / 512);
      for (let f = 0; f < out.length; f++, seen++) {
        const centre = (seen + 0.5) * FRAME_SECONDS;
        out[f] = intervals.some((v) => centre >= v.startSeconds && centre < v.endSeconds) ? 0.95 : 0.05;
      }
      return out;
    },
  };
}

/** The runner's loudness and speech results, decoded in 4096-frame blocks and settled per block. */
async function measure(mix: Float32Array, intervals: readonly SpeechInterval[], minimumSharePercent?: number) {
  const runner = new AnalysisRunner(
    { sampleRate: RATE, channels: 1, channelLabels: ['M'] },
    { speech: { enabled: true, minimumSharePercent } },
    ['loudness', 'speech'],
    { speechClassifier: knowingClassifier(intervals) },
  );
  for (let start = 0; start < mix.length; start += 4096) {
    const block: PcmBlock = {
      channelData: [mix.subarray(start, start + 4096)],
      frames: Math.min(4096, mix.length - start),
    };
    runner.push(block);
    await runner.settle();
  }
  const { loudness, speech } = runner.partialResult();
  if (!loudness || !speech) throw new Error('the runner gave no loudness or speech result');
  return { momentaryLufs: loudness.momentaryLufs, speech };
}

describe('dialogueReading', () => {
  it('equals the corpus truth with a perfect detector (to 1e-9 LU)', async () => {
    const { mix, stem } = programme(0.3);
    const truth = dialogueTruth(mix, stem, INTERVALS, RATE);
    const { momentaryLufs, speech } = await measure(mix, INTERVALS);
    // The precondition: the frames give the truth's blocks.
    const mask = speechBlockMask(speech.frameIsSpeech, speech.frameSeconds, truth.blockCount);
    expect(Array.from(mask, (v) => v === 1)).toEqual(truth.blockIsSpeech);
    const programmeLufs = integratedLufsFrom(momentaryLufs, 0, RATE);
    const reading = dialogueReading(speech, momentaryLufs, 0, RATE, programmeLufs);

    expect(reading.measured).toBe(true);
    expect(reading.measurable).toBe(true);
    expect(reading.note).toBeNull();
    expect(reading.detector).toBe('fake-detector');
    expect(reading.programmeBlocks).toBe(truth.blockCount);
    // 12 s: 117 blocks (ITU-R BS.1770-5 Annex 1); speech where 0.1k lies in (start - 0.2, end - 0.2):
    // k = 9-38, 59-83 and 99-113, 30 + 25 + 15.
    expect(truth.blockCount).toBe(117);
    expect(truth.speechBlockCount).toBe(70);
    expect(reading.speechBlocks).toBe(truth.speechBlockCount);
    expect(reading.speechSharePercent).toBeCloseTo(truth.speechSharePercent, 12);
    expect(Math.abs((reading.dialogueLufs ?? Number.NaN) - (truth.dialogueLufs ?? Number.NaN))).toBeLessThan(1e-9);
    expect(Math.abs((programmeLufs ?? Number.NaN) - (truth.programmeLufs ?? Number.NaN))).toBeLessThan(1e-9);
    expect(
      Math.abs((reading.loudnessToDialogueLu ?? Number.NaN) - (truth.loudnessToDialogueLu ?? Number.NaN)),
    ).toBeLessThan(1e-9);
    // The quiet interval's blocks are speech but gated out: without them (the relative gate
    // applied to speech blocks) the reading is the same; with them averaged in it is not.
    const powers = blockPowers(mix, RATE);
    const quiet = truth.blockIsSpeech.map((s, k) => s && k * 0.1 >= 9.8);
    expect(quiet.filter(Boolean).length).toBeGreaterThan(0);
    const loudSpeech = truth.blockIsSpeech.map((s, k) => s && !quiet[k]);
    expect(Math.abs((gatedLoudnessOf(powers, loudSpeech) ?? 0) - (reading.dialogueLufs ?? 0))).toBeLessThan(1e-9);
    const ungatedLufs =
      -0.691 +
      10 *
        Math.log10(powers.filter((_, k) => truth.blockIsSpeech[k]).reduce((a, b) => a + b, 0) / truth.speechBlockCount);
    expect((reading.dialogueLufs ?? 0) - ungatedLufs).toBeGreaterThan(0.5);
  });

  it('gives the loudness-to-dialogue ratio as programme minus dialogue, of either sign', async () => {
    // Speech 18 dB over the bed: dialogue louder than the programme, LDR negative (only a
    // little: the programme's relative gate drops most bed-only blocks).
    const loud = programme(0.3);
    const a = await measure(loud.mix, INTERVALS);
    const aProgramme = integratedLufsFrom(a.momentaryLufs, 0, RATE);
    const aReading = dialogueReading(a.speech, a.momentaryLufs, 0, RATE, aProgramme);
    expect(aReading.loudnessToDialogueLu).toBeLessThan(-0.2);
    expect(aReading.loudnessToDialogueLu).toBeCloseTo((aProgramme ?? 0) - (aReading.dialogueLufs ?? 0), 12);
    // Speech under the bed (the tones at 0.01 over noise at 0.05), and the bed 18 dB up for a
    // second between the speech: the programme is louder than its speech blocks, LDR positive.
    const soft = programme(0.01);
    for (let i = 4.5 * RATE; i < 5.5 * RATE; i++) soft.mix[i] *= 8;
    const b = await measure(soft.mix, INTERVALS);
    const bProgramme = integratedLufsFrom(b.momentaryLufs, 0, RATE);
    const bReading = dialogueReading(b.speech, b.momentaryLufs, 0, RATE, bProgramme);
    expect(bReading.loudnessToDialogueLu).toBeGreaterThan(1);
    const truth = dialogueTruth(soft.mix, soft.stem, INTERVALS, RATE);
    expect(Math.abs((bReading.loudnessToDialogueLu ?? 0) - (truth.loudnessToDialogueLu ?? 0))).toBeLessThan(1e-9);
    // Without a programme loudness there is no ratio.
    expect(dialogueReading(b.speech, b.momentaryLufs, 0, RATE, null).loudnessToDialogueLu).toBeNull();
  });

  it('drops the blocks before the line-up end (fromFrame)', async () => {
    const { mix } = programme(0.3);
    const { momentaryLufs, speech } = await measure(mix, INTERVALS);
    const powers = blockPowers(mix, RATE);
    const truthMask = speechBlocks(powers.length, INTERVALS);
    // From 2 s: block 20 on. From 1.05 s: the first block starting at or after it, 11 (1.1 s).
    for (const [fromFrame, first] of [
      [96000, 20],
      [50400, 11],
    ]) {
      const reading = dialogueReading(speech, momentaryLufs, fromFrame, RATE, null);
      expect(reading.fromSeconds).toBe(fromFrame / RATE);
      expect(reading.programmeBlocks).toBe(powers.length - first);
      const kept = truthMask.slice(first);
      expect(reading.speechBlocks).toBe(kept.filter(Boolean).length);
      expect(reading.speechSharePercent).toBeCloseTo((100 * kept.filter(Boolean).length) / kept.length, 12);
      const expected = gatedLoudnessOf(powers.subarray(first), kept);
      expect(Math.abs((reading.dialogueLufs ?? 0) - (expected ?? Number.NaN))).toBeLessThan(1e-9);
    }
    // From 4.5 s the first interval's speech (blocks 9-38, the loudest) is gone: the reading drops.
    const whole = dialogueReading(speech, momentaryLufs, 0, RATE, null);
    const later = dialogueReading(speech, momentaryLufs, 4.5 * RATE, RATE, null);
    expect((whole.dialogueLufs ?? 0) - (later.dialogueLufs ?? 0)).toBeGreaterThan(1);
  });

  it('is not measurable under the minimum share, with a note saying why', async () => {
    const { mix } = programme(0.3);
    const brief = [{ startSeconds: 6.05, endSeconds: 7.05 }];
    const { momentaryLufs, speech } = await measure(mix, brief);
    const reading = dialogueReading(speech, momentaryLufs, 0, RATE, -20);
    // [6.05, 7.05) s: blocks 59-68, 10 of 117 = 8.5 %, under the default 10 %.
    expect(reading.speechBlocks).toBe(10);
    expect(reading.speechSharePercent).toBeCloseTo((100 * 10) / 117, 12);
    expect(reading.minimumSharePercent).toBe(10);
    expect(reading.measured).toBe(true);
    expect(reading.measurable).toBe(false);
    expect(reading.dialogueLufs).toBeNull();
    expect(reading.loudnessToDialogueLu).toBeNull();
    expect(reading.note).toContain('8.5 %');
    expect(reading.note).toContain('10 %');
    // At a minimum equal to the share it is measurable (share >= minimum).
    const atShare = dialogueReading({ ...speech, minimumSharePercent: (100 * 10) / 117 }, momentaryLufs, 0, RATE, -20);
    expect(atShare.measurable).toBe(true);
    expect(atShare.dialogueLufs).not.toBeNull();
    expect(atShare.note).toBeNull();
    // The option reaches the reading through the meter.
    const lower = await measure(mix, brief, 5);
    expect(dialogueReading(lower.speech, lower.momentaryLufs, 0, RATE, -20).measurable).toBe(true);
  });

  it('says why when the programme is shorter than a block or its speech is below the absolute gate', () => {
    const speech: SpeechResult = {
      enabled: true,
      detector: 'fake-detector',
      frameSeconds: FRAME_SECONDS,
      threshold: 0.5,
      minimumSharePercent: 10,
      frameIsSpeech: new Uint8Array(200).fill(1),
    };
    // Three momentary values: no whole 400 ms block.
    const short = dialogueReading(speech, Float64Array.from([Number.NaN, Number.NaN, Number.NaN]), 0, RATE, null);
    expect(short.programmeBlocks).toBe(0);
    expect(short.measurable).toBe(false);
    expect(short.note).toContain('shorter than one 400 ms');
    // Every block below -70 LUFS (NaN in the series): speech everywhere, but no reading
    // (ITU-R BS.1770-5 eq. (5): the absolute gate).
    const silent = dialogueReading(speech, new Float64Array(20).fill(Number.NaN), 0, RATE, null);
    expect(silent.speechSharePercent).toBe(100);
    expect(silent.measurable).toBe(false);
    expect(silent.dialogueLufs).toBeNull();
    expect(silent.note).toContain('-70 LUFS');
  });

  it('reads a hand-built series by closed form', () => {
    // 20 blocks (23 momentary values, the first three before 400 ms). Frames of 100 ms: block k
    // holds the centres of frames k to k + 3, so speech frames 6-16 make blocks 5-14 speech
    // (3 or 4 of 4) and blocks 4 and 15 not (2 of 4).
    const momentaryLufs = new Float64Array(23).fill(-10);
    for (let k = 5; k < 15; k++) momentaryLufs[3 + k] = k % 2 === 0 ? -20 : -24;
    momentaryLufs[3 + 14] = -40; // below the relative gate: -21.5 - 10
    const frameIsSpeech = new Uint8Array(24);
    frameIsSpeech.fill(1, 6, 17);
    const speech: SpeechResult = {
      enabled: true,
      detector: 'fake-detector',
      frameSeconds: 0.1,
      threshold: 0.5,
      minimumSharePercent: 10,
      frameIsSpeech,
    };
    const reading = dialogueReading(speech, momentaryLufs, 0, RATE, -12);
    expect(reading.speechBlocks).toBe(10);
    expect(reading.speechSharePercent).toBe(50);
    // Blocks 5-13 pass: four at -20 (even k) and five at -24 LUFS; the mean of powers
    // (ITU-R BS.1770-5 eq. (7): the offset -0.691 cancels).
    const expected = 10 * Math.log10((4 * 10 ** -2 + 5 * 10 ** -2.4) / 9);
    expect(reading.dialogueLufs).toBeCloseTo(expected, 9);
    expect(reading.loudnessToDialogueLu).toBeCloseTo(-12 - expected, 9);
  });

  it('gives measured false and nulls when the detector did not run', () => {
    const speech: SpeechResult = {
      enabled: false,
      detector: null,
      frameSeconds: FRAME_SECONDS,
      threshold: 0.5,
      minimumSharePercent: 10,
      frameIsSpeech: new Uint8Array(0),
    };
    const reading = dialogueReading(speech, new Float64Array(50).fill(-20), 0, RATE, -20);
    expect(reading).toMatchObject({
      measured: false,
      detector: null,
      measurable: false,
      speechSharePercent: null,
      dialogueLufs: null,
      loudnessToDialogueLu: null,
      speechBlocks: 0,
      programmeBlocks: 0,
    });
    expect(reading.note).toContain('not measured');
  });
});
