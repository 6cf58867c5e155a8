// The optimised TimeWeightedLevelMeter reads exactly what the straightforward per-sample meter it
// replaced reads (kept in test/helpers/reference-meters/ballistics.ts): maxima from result() and the
// end-of-block state from current(c), on the shared test material plus signals whose maxima rise late,
// a full-scale sine, a crescendo, isolated clicks (some set a new maximum by one sample) and tiny values decaying into silence, cut into odd
// block sizes.
import { describe, it } from 'vitest';
import { defaultChannelLabels, type StreamInfo } from '../../src/analysis/audio.ts';
import { TimeWeightedLevelMeter } from '../../src/analysis/ballistics.ts';
import { seededRandom } from '../../src/selftest/signals.ts';
import { TimeWeightedLevelMeter as ReferenceTimeWeightedLevelMeter } from '../helpers/reference-meters/ballistics.ts';
import { BLOCK_CUTS, cut, expectClose, SAMPLE_RATE, testSignals } from '../helpers/test-signals.ts';

interface Readable {
  push: TimeWeightedLevelMeter['push'];
  result: TimeWeightedLevelMeter['result'];
  current: TimeWeightedLevelMeter['current'];
}

function readings(meter: Readable, channels: number): unknown {
  return { result: meter.result(), current: Array.from({ length: channels }, (_, c) => meter.current(c)) };
}

function channelsOf(channels: number, frames: number, sample: (c: number, i: number) => number): Float32Array[] {
  return Array.from({ length: channels }, (_, c) => Float32Array.from({ length: frames }, (_, i) => sample(c, i)));
}

/** Material aimed at the places a chunked or bound-skipping meter could go wrong. */
function edgeSignals(channels: number): Record<string, Float32Array[]> {
  const random = seededRandom(21);
  const noise = () => 2 * random() - 1;
  const block = 65_536;
  const frames = 4 * block + 1_234;
  // Quiet noise, then loud bursts that end exactly on block boundaries of the 65 536 cut and at the
  // very end of the stream, each louder than the last, so every maximum is set in the last samples.
  const lateRise = channelsOf(channels, frames, (c, i) => {
    const quiet = 0.01 * noise();
    if (i >= block - 300 && i < block) return 0.3 * noise();
    if (i >= 3 * block - 40 - c && i < 3 * block) return 0.6 * noise();
    if (i >= frames - 25) return (0.9 + 0.01 * c) * noise();
    return quiet;
  });
  // Steady full-scale sine (maxima sit on the ripple of the mean).
  const fullScaleSine = channelsOf(channels, 3 * SAMPLE_RATE, (c, i) => Math.sin((2 * Math.PI * (997 + 10 * c) * i) / SAMPLE_RATE));
  // A slow crescendo: the maxima rise almost all the way through.
  const crescendo = channelsOf(channels, 3 * SAMPLE_RATE, (c, i) => (i / (3 * SAMPLE_RATE)) ** (1 + c) * noise());
  // Isolated clicks, growing, on and off any chunk grid, over near-silence.
  const clicks = channelsOf(channels, 2 * SAMPLE_RATE, (c, i) => {
    if (i % 9_973 === 64 * c || i % 9_973 === 63) return (0.1 + i / (2 * SAMPLE_RATE)) * (i % 2 ? 1 : -1);
    return 1e-6 * noise();
  });
  // Single-sample clicks on (channel 0) and just off the 64-frame grid, each 0.3 % louder than the
  // last, after silence long enough to forget the one before: every new maximum is set by one sample
  // at the start of a chunk, within a hair of the previous one.
  const steppedClicks = channelsOf(channels, 8 * SAMPLE_RATE, (c, i) =>
    (i % SAMPLE_RATE === 7 * c ? 0.5 * 1.003 ** Math.floor(i / SAMPLE_RATE) : 0));
  // A quiet steady tone sets the Slow and VU maxima; a second after it ends, clicks 0.1 % louder each
  // raise only the Fast one (one click reads louder than the tone on Fast, quieter on Slow and VU).
  const clicksOverTone = channelsOf(channels, 12 * SAMPLE_RATE, (c, i) => (i < 4 * SAMPLE_RATE
    ? 0.0125 * Math.sin((2 * Math.PI * 997 * i) / SAMPLE_RATE)
    : i > 5 * SAMPLE_RATE && i % SAMPLE_RATE === 7 * c ? 0.9 * 1.001 ** Math.floor(i / SAMPLE_RATE) : 0));
  // Tiny values, then a long digital silence that decays the state down to the denormal flush.
  const tinyThenSilence = channelsOf(channels, 1_200_000, (c, i) => (i < 1_000 + 100 * c ? 1e-38 * noise() : 0));
  return { lateRise, fullScaleSine, crescendo, clicks, steppedClicks, clicksOverTone, tinyThenSilence };
}

describe.each([1, 2, 3, 6])('optimised time-weighted levels equal the reference implementation (%i channels)', (channels) => {
  const info: StreamInfo = { sampleRate: SAMPLE_RATE, channels, channelLabels: defaultChannelLabels(channels) };
  const signals = { ...testSignals(channels), ...edgeSignals(channels) };
  for (const [signalName, signal] of Object.entries(signals)) {
    it(`ballistics on ${signalName}: maxima and end state however the stream is cut`, () => {
      const reference = new ReferenceTimeWeightedLevelMeter(info);
      for (const block of cut(signal, [65_536])) reference.push(block);
      const expected = readings(reference, channels);
      for (const sizes of BLOCK_CUTS) {
        const meter = new TimeWeightedLevelMeter(info);
        for (const block of cut(signal, sizes)) meter.push(block);
        expectClose(readings(meter, channels), expected, 1e-9);
      }
    });

    it(`ballistics on ${signalName}: current() after every block`, () => {
      for (const sizes of BLOCK_CUTS) {
        const meter = new TimeWeightedLevelMeter(info);
        const reference = new ReferenceTimeWeightedLevelMeter(info);
        let k = 0;
        for (const block of cut(signal, sizes)) {
          meter.push(block);
          reference.push(block);
          expectClose(readings(meter, channels), readings(reference, channels), 1e-9, `${sizes.join(',')} block ${k++}`);
        }
      }
    });
  }
});
