// The speech meter with a fake classifier that records what it is given: whole 512-sample frames
// in stream order whatever the block sizes, the threshold as a strict bound, no call with nothing
// to classify, a typed error without a classifier, and the runner awaiting the classifier.

import { describe, expect, it } from 'vitest';
import type { PcmBlock, StreamInfo } from '../../src/analysis/audio.ts';
import { AnalysisRunner, METERS } from '../../src/analysis/runner.ts';
import { type SpeechClassifier, SpeechMeter } from '../../src/analysis/speech/meter.ts';
import { EarmarkError } from '../../src/errors/index.ts';

const FRAME = 512;
const MONO_16K: StreamInfo = { sampleRate: 16000, channels: 1, channelLabels: ['M'] };

/** Records copies of the frames it is given; answers `decide(frame, index)` after a timer tick. */
function recordingClassifier(decide: (frame: Float32Array, index: number) => number = () => 0) {
  const calls: Float32Array[] = [];
  const frames: Float32Array[] = [];
  const classifier: SpeechClassifier = {
    name: 'fake-detector',
    frameSamples: FRAME,
    async classify(samples) {
      calls.push(samples.slice());
      const out = new Float32Array(Math.floor(samples.length / FRAME));
      for (let f = 0; f < out.length; f++) {
        const frame = samples.slice(f * FRAME, (f + 1) * FRAME);
        out[f] = decide(frame, frames.length);
        frames.push(frame);
      }
      // Really asynchronous: the meter must wait for the answer.
      await new Promise((resolve) => setTimeout(resolve, 1));
      return out;
    },
  };
  return { classifier, calls, frames };
}

function* blocks(samples: Float32Array, sizes: number[]): Generator<PcmBlock> {
  for (let start = 0, k = 0; start < samples.length; k++) {
    const end = Math.min(samples.length, start + sizes[k % sizes.length]);
    yield { channelData: [samples.subarray(start, end)], frames: end - start };
    start = end;
  }
}

// At 16 kHz the feed neither filters nor moves samples (output n is input n, made once input
// n + 1 has arrived: feed.ts), so the frames must be the input itself: sample i holds i / 2^15,
// exact in float32.
const TOTAL = 5 * FRAME + 300;
const ramp = Float32Array.from({ length: TOTAL }, (_, i) => i / 2 ** 15);
const expectedFrames = Array.from({ length: Math.floor((TOTAL - 1) / FRAME) }, (_, f) =>
  ramp.slice(f * FRAME, (f + 1) * FRAME),
);

describe('SpeechMeter', () => {
  for (const sizes of [[1], [7], [4096], [511, 1, 513, 2], [FRAME]]) {
    it(`classifies whole frames in stream order from blocks of ${sizes.join(', ')}`, async () => {
      const { classifier, calls, frames } = recordingClassifier();
      const meter = new SpeechMeter(MONO_16K, { enabled: true }, classifier);
      for (const block of blocks(ramp, sizes)) {
        meter.push(block);
        await meter.settle();
      }
      for (const call of calls) {
        expect(call.length).toBeGreaterThan(0);
        expect(call.length % FRAME).toBe(0);
      }
      expect(frames).toEqual(expectedFrames);
      const result = meter.result();
      expect(result.frameIsSpeech.length).toBe(expectedFrames.length);
      // 512 samples at 16 kHz.
      expect(result.frameSeconds).toBe(0.032);
      expect(result.detector).toBe('fake-detector');
      expect(result.enabled).toBe(true);
    });
  }

  it('gives the same frames when settled only now and then', async () => {
    const { classifier, calls, frames } = recordingClassifier();
    const meter = new SpeechMeter(MONO_16K, { enabled: true }, classifier);
    let k = 0;
    for (const block of blocks(ramp, [300, 77])) {
      meter.push(block);
      if (++k % 5 === 0) await meter.settle();
    }
    await meter.settle();
    expect(frames).toEqual(expectedFrames);
    // Several frames go in one call once enough are queued.
    expect(Math.max(...calls.map((c) => c.length))).toBeGreaterThan(FRAME);
    expect(meter.result().frameIsSpeech.length).toBe(expectedFrames.length);
  });

  it('classifies each frame once when settle is called again before the last call finished', async () => {
    const { classifier, frames } = recordingClassifier();
    const meter = new SpeechMeter(MONO_16K, { enabled: true }, classifier);
    const pending: Promise<void>[] = [];
    for (const block of blocks(ramp, [700])) {
      meter.push(block);
      pending.push(meter.settle());
    }
    await Promise.all(pending);
    expect(frames).toEqual(expectedFrames);
    expect(meter.result().frameIsSpeech.length).toBe(expectedFrames.length);
  });

  it('marks a frame speech only when its probability exceeds the threshold', async () => {
    const probabilities = [0.5, 0.500001, 0.7, 0.2, 1, 0, 0.69999, 0.75];
    const input = new Float32Array(probabilities.length * FRAME + 1);
    const run = async (threshold?: number) => {
      const { classifier } = recordingClassifier((_, f) => probabilities[f]);
      const meter = new SpeechMeter(MONO_16K, { enabled: true, threshold }, classifier);
      meter.push({ channelData: [input], frames: input.length });
      await meter.settle();
      return meter.result();
    };
    const byDefault = await run();
    expect(byDefault.threshold).toBe(0.5);
    expect(Array.from(byDefault.frameIsSpeech)).toEqual([0, 1, 1, 0, 1, 0, 1, 1]);
    expect(Array.from((await run(0.7)).frameIsSpeech)).toEqual([0, 0, 0, 0, 1, 0, 0, 1]);
  });

  it('refuses a threshold outside (0, 1) with a typed error', () => {
    const { classifier } = recordingClassifier();
    for (const threshold of [0, 1, -0.1, 1.5, Number.NaN]) {
      const make = () => new SpeechMeter(MONO_16K, { enabled: true, threshold }, classifier);
      expect(make).toThrow(EarmarkError);
      expect(make).toThrow(expect.objectContaining({ code: 'invalid_argument' }));
    }
  });

  it('does not call the classifier with nothing or only a part frame queued', async () => {
    const { classifier, calls } = recordingClassifier();
    const meter = new SpeechMeter(MONO_16K, { enabled: true }, classifier);
    await meter.settle();
    expect(calls).toHaveLength(0);
    // 512 samples in make 511 out: still no whole frame.
    meter.push({ channelData: [ramp.subarray(0, FRAME)], frames: FRAME });
    await meter.settle();
    expect(calls).toHaveLength(0);
    expect(meter.result().frameIsSpeech).toHaveLength(0);
    meter.push({ channelData: [ramp.subarray(FRAME, FRAME + 1)], frames: 1 });
    await meter.settle();
    expect(calls).toHaveLength(1);
    await meter.settle();
    expect(calls).toHaveLength(1);
  });

  it('throws a typed error when enabled without a classifier', () => {
    const make = () => new SpeechMeter(MONO_16K, { enabled: true });
    expect(make).toThrow(EarmarkError);
    expect(make).toThrow(expect.objectContaining({ code: 'internal_error' }));
  });

  it('does nothing when not enabled, even with a classifier', async () => {
    const { classifier, calls } = recordingClassifier(() => 1);
    const meter = new SpeechMeter(MONO_16K, {}, classifier);
    for (const block of blocks(ramp, [4096])) meter.push(block);
    await meter.settle();
    expect(calls).toHaveLength(0);
    const result = meter.result();
    expect(result.enabled).toBe(false);
    expect(result.detector).toBeNull();
    expect(result.frameIsSpeech).toHaveLength(0);
  });
});

describe('AnalysisRunner and the speech meter', () => {
  const info: StreamInfo = { sampleRate: 48000, channels: 2, channelLabels: ['L', 'R'] };
  const seconds = 1;
  const left = Float32Array.from(
    { length: seconds * 48000 },
    (_, i) => 0.3 * Math.sin((2 * Math.PI * 440 * i) / 48000),
  );
  const stereoBlocks = () => {
    const out: PcmBlock[] = [];
    for (let start = 0; start < left.length; start += 4000) {
      const end = Math.min(left.length, start + 4000);
      out.push({ channelData: [left.subarray(start, end), left.subarray(start, end)], frames: end - start });
    }
    return out;
  };
  // One second at 48 kHz: 16000 - 1 samples at 16 kHz (n * 3 < 47999), 31 whole frames.
  const WHOLE_FRAMES = Math.floor(15999 / FRAME);

  it('keeps the speech meter on the decoding thread (registry)', () => {
    expect(METERS.speech.mainThreadOnly).toBe(true);
  });

  it('settle() waits for the classifier before the result is read', async () => {
    // Every other frame speech, decided by the recorded frame count.
    const { classifier, frames } = recordingClassifier((_, f) => (f % 2 === 0 ? 0.9 : 0.1));
    const runner = new AnalysisRunner(info, { speech: { enabled: true } }, ['loudness', 'speech'], {
      speechClassifier: classifier,
    });
    for (const block of stereoBlocks()) runner.push(block);
    // Pushed but not settled: nothing classified yet.
    expect(runner.partialResult().speech?.frameIsSpeech).toHaveLength(0);
    await runner.settle();
    const speech = runner.partialResult().speech;
    expect(frames).toHaveLength(WHOLE_FRAMES);
    expect(speech?.frameIsSpeech).toEqual(Uint8Array.from({ length: WHOLE_FRAMES }, (_, f) => (f % 2 === 0 ? 1 : 0)));
    expect(speech?.detector).toBe('fake-detector');
  });

  it('settling per block gives the same decisions as settling once', async () => {
    const decide = (frame: Float32Array) => (frame[100] > 0 ? 0.8 : 0.2);
    const once = recordingClassifier(decide);
    const perBlock = recordingClassifier(decide);
    const a = new AnalysisRunner(info, { speech: { enabled: true } }, ['speech'], {
      speechClassifier: once.classifier,
    });
    const b = new AnalysisRunner(info, { speech: { enabled: true } }, ['speech'], {
      speechClassifier: perBlock.classifier,
    });
    for (const block of stereoBlocks()) {
      a.push(block);
      b.push(block);
      await b.settle();
    }
    await a.settle();
    expect(perBlock.frames).toEqual(once.frames);
    expect(b.partialResult().speech).toEqual(a.partialResult().speech);
  });

  it('does not run the classifier when speech is not asked for', async () => {
    const { classifier, calls } = recordingClassifier(() => 1);
    const runner = new AnalysisRunner(info, {}, undefined, { speechClassifier: classifier });
    for (const block of stereoBlocks()) runner.push(block);
    await runner.settle();
    expect(calls).toHaveLength(0);
    expect(runner.result().speech.enabled).toBe(false);
  });
});
