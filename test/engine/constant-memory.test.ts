// One pass, constant memory: two hours of stereo audio, generated on the fly as WAV bytes,
// decoded by the streaming reader and measured by every meter, must not grow the heap with
// duration. Only the per-100 ms series grow (a few bytes per 100 ms), so between the
// 15-minute mark and the 2-hour mark the retained heap may grow by a few MB, not by the
// gigabytes of PCM that pass through.
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { describe, expect, it } from 'vitest';
import { defaultChannelLabels } from '../../src/analysis/audio.ts';
import { AnalysisRunner } from '../../src/analysis/runner.ts';
import { openPcmStream } from '../../src/decode/index.ts';
import { encodePcmFrames, wavHeader } from '../../src/encode/wav.ts';

setFlagsFromString('--expose-gc');
const collectGarbage = runInNewContext('gc') as () => void;
const retainedHeapBytes = () => {
  collectGarbage();
  return process.memoryUsage().heapUsed;
};

const SAMPLE_RATE = 8000;
const CHANNELS = 2;
const SECONDS = 2 * 3600;
const CHUNK_FRAMES = 8000;

/** WAV bytes: a fixed noise second re-used with a slowly changing gain (cheap to generate). */
async function* wavStream(): AsyncGenerator<Uint8Array> {
  yield wavHeader({
    sampleRate: SAMPLE_RATE,
    channels: CHANNELS,
    bitsPerSample: 16,
    float: false,
    frames: SAMPLE_RATE * SECONDS,
  });
  let seed = 1;
  const noise = Float32Array.from({ length: CHUNK_FRAMES }, () => {
    seed = (seed * 16807) % 2147483647;
    return seed / 2147483647 - 0.5;
  });
  for (let second = 0; second < SECONDS; second++) {
    const gain = 0.2 + 0.15 * Math.sin(second / 30);
    const left = noise.map((v) => v * gain);
    const right = noise.map((_v, i) => noise[(i + 17) % CHUNK_FRAMES] * gain);
    yield encodePcmFrames([left, right], 16, false);
  }
}

describe('constant memory over a 2-hour stream', () => {
  it('keeps retained heap growth under 8 MB between 15 minutes and 2 hours', async () => {
    const decoded = await openPcmStream(wavStream());
    const runner = new AnalysisRunner({
      sampleRate: SAMPLE_RATE,
      channels: CHANNELS,
      channelLabels: defaultChannelLabels(CHANNELS),
    });
    let heapAt15Minutes = 0;
    let frames = 0;
    for await (const block of decoded.blocks) {
      runner.push(block);
      frames += block.frames;
      if (heapAt15Minutes === 0 && frames >= SAMPLE_RATE * 900) heapAt15Minutes = retainedHeapBytes();
    }
    const heapAtEnd = retainedHeapBytes();
    const result = runner.result();
    expect(frames).toBe(SAMPLE_RATE * SECONDS);
    expect(result.loudness.integratedLufs).not.toBeNull();
    expect(heapAtEnd - heapAt15Minutes).toBeLessThan(8 * 1024 * 1024);
  }, 300_000);
});
