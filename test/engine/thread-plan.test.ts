// The thread plan: how many threads `auto` gives a file, and the decoding thread's load.
import { describe, expect, it } from 'vitest';
import type { AudioFormat } from '../../src/decode/types.ts';
import { AUTO_THREADS_MIN_SECONDS, decodeCostFor, threadsFor } from '../../src/engine/thread-plan.ts';

function format(container: AudioFormat['container'], durationSeconds: number | null, channels = 2): AudioFormat {
  const sampleRate = 48000;
  return {
    container,
    encoding: 'pcm_s24le',
    sampleRate,
    channels,
    bitsPerSample: 24,
    frames: durationSeconds === null ? null : durationSeconds * sampleRate,
    durationSeconds,
    channelLabels: [],
    channelMask: null,
    timeReferenceSamples: null,
  };
}

describe('threadsFor', () => {
  it('keeps a number as given and defaults to one thread', () => {
    expect(threadsFor(3, format('wav', 10), 2)).toBe(3);
    expect(threadsFor(undefined, format('wav', 3600), 8)).toBe(1);
  });

  it('gives auto two threads for a long file where two cores are free, one otherwise', () => {
    expect(threadsFor('auto', format('wav', 3600), 2)).toBe(2);
    expect(threadsFor('auto', format('wav', AUTO_THREADS_MIN_SECONDS), 2)).toBe(2);
    expect(threadsFor('auto', format('wav', AUTO_THREADS_MIN_SECONDS - 1), 2)).toBe(1);
    expect(threadsFor('auto', format('wav', 3600), 1)).toBe(1);
    // A stream of unknown length: its decoding alone outweighs a thread's start.
    expect(threadsFor('auto', format('flac', null), 2)).toBe(2);
  });
});

describe('decodeCostFor', () => {
  it("is the decoder's cost, plus hashing at the file's byte rate", () => {
    const wav = format('wav', 60);
    // One minute of 48 kHz stereo 24-bit: 17.28 MB, about 10.8 ms at 1.6 GB/s.
    const bytes = 48000 * 2 * 3 * 60;
    expect(decodeCostFor(wav, bytes, false)).toBe(10.5);
    expect(decodeCostFor(wav, bytes, true)).toBeCloseTo(10.5 + bytes / 1.6e6, 6);
    // Costs are per 48 kHz stereo minute: six channels hash three times the bytes in the same units.
    expect(decodeCostFor(format('wav', 60, 6), bytes * 3, true)).toBeCloseTo(10.5 + bytes / 1.6e6, 6);
    expect(decodeCostFor(format('flac', 60), 5e6, false)).toBeGreaterThan(100);
  });
});
