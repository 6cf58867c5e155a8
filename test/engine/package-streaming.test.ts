// The package set check streams: blocks of any size come out of the frame reader in order (also
// when a decoder reuses its arrays), a FLAC stem walks in lockstep with a WAV mix, and an hour of
// four members does not grow the heap with its length.

import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { afterAll, describe, expect, it } from 'vitest';
import type { PcmBlock } from '../../src/analysis/audio.ts';
import { openPcmStream } from '../../src/decode/index.ts';
import type { DecodedAudio } from '../../src/decode/types.ts';
import { encodePcmFrames, wavHeader } from '../../src/encode/wav.ts';
import { EarmarkError } from '../../src/errors/index.ts';
import { FrameReader } from '../../src/engine/frame-reader.ts';
import { checkOpenedSet, checkPackageSet } from '../../src/engine/package-set.ts';
import { seededRandom } from '../../src/selftest/signals.ts';
import { writeStemSet } from '../helpers/stem-files.ts';
import { BLOCK_CUTS, cut } from '../helpers/test-signals.ts';
import { hasTool } from '../helpers/tools.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-package-stream-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** A decoded stream over planar arrays, cut into `sizes`, each block copied into one reused set of arrays. */
function fakeAudio(channels: Float32Array[], sizes: number[]): DecodedAudio {
  const largest = Math.max(...sizes);
  const reused = channels.map(() => new Float32Array(largest));
  async function* blocks(): AsyncGenerator<PcmBlock> {
    for (const block of cut(channels, sizes)) {
      for (let c = 0; c < channels.length; c++) reused[c].set(block.channelData[c]);
      yield { channelData: reused.map((r) => r.subarray(0, block.frames)), frames: block.frames };
    }
  }
  return {
    format: {
      container: 'wav',
      encoding: 'pcm_f32le',
      sampleRate: 48_000,
      channels: channels.length,
      bitsPerSample: 32,
      frames: channels[0].length,
      durationSeconds: channels[0].length / 48_000,
      channelLabels: channels.length === 2 ? ['L', 'R'] : ['M'],
      channelMask: null,
      timeReferenceSamples: null,
    },
    blocks: blocks(),
    warnings: [],
    framesDecoded: 0,
  };
}

describe('FrameReader', () => {
  it.each(BLOCK_CUTS)('hands out every frame in order from blocks cut %j, in steps of 16384', async (...sizes) => {
    const random = seededRandom(7);
    const frames = 100_003;
    const channels = [0, 1].map(() => Float32Array.from({ length: frames }, () => random() - 0.5));
    const reader = new FrameReader(fakeAudio(channels, sizes), 16_384);
    const out = channels.map(() => new Float32Array(frames));
    let at = 0;
    for (let n = await reader.read(); n > 0; n = await reader.read()) {
      for (let c = 0; c < 2; c++) out[c].set(reader.channelData[c].subarray(0, n), at);
      at += n;
      if (!reader.done) expect(n).toBe(16_384);
    }
    expect(at).toBe(frames);
    expect(reader.framesRead).toBe(frames);
    expect(out).toEqual(channels);
  });
});

describe('lockstep across decoders', () => {
  it.skipIf(!hasTool('sox'))('FLAC stems (converted by sox) null against a 24-bit WAV mix', async () => {
    const set = await writeStemSet({ dir, seconds: 2, bitsPerSample: 24, prefix: 'flac-' });
    const flacs = set.stems.map((stem, i) => {
      const flac = join(dir, `flac-stem-${i + 1}.flac`);
      const sox = spawnSync('sox', [stem, flac], { encoding: 'utf8' });
      expect(sox.status, sox.stderr).toBe(0);
      return flac;
    });
    const result = await checkPackageSet([
      { path: set.mix, role: 'mix' },
      ...flacs.map((path) => ({ path, role: 'stem' as const })),
    ]);
    expect(result.members.map((m) => m.container)).toEqual(['wav', 'flac', 'flac', 'flac']);
    expect(result.checks.every((c) => c.passed)).toBe(true);
    // FLAC is lossless (RFC 9639): the integer sum still nulls to digital silence.
    expect(result.residual?.residualRelativeDb).toBeNull();
    expect(result.residual?.frames).toBe(96_000);
  });
});

describe('errors', () => {
  it('a decode error part-way names its member and closes the others', async () => {
    const channels = [new Float32Array(50_000), new Float32Array(50_000)];
    const good = fakeAudio(channels, [4096]);
    let goodClosed = false;
    const blocks = good.blocks;
    good.blocks = (async function* () {
      try {
        yield* blocks;
      } finally {
        goodClosed = true;
      }
    })();
    const broken = fakeAudio(channels, [4096]);
    broken.blocks = (async function* () {
      yield { channelData: channels.map((c) => c.subarray(0, 4096)), frames: 4096 };
      throw new EarmarkError('corrupt_file', 'bad frame at byte 1234');
    })();
    await expect(
      checkOpenedSet([
        { name: 'mix.wav', role: 'mix', audio: good },
        { name: 'stem.wav', role: 'stem', audio: broken },
      ]),
    ).rejects.toMatchObject({
      code: 'corrupt_file',
      message: 'stem.wav: bad frame at byte 1234',
      details: { member: 'stem.wav' },
    });
    expect(goodClosed).toBe(true);
  });
});

describe('claims', () => {
  it('a header claiming 2^50 frames does not size anything by the claim', async () => {
    const channels = [new Float32Array(10_000), new Float32Array(10_000)];
    const liar = fakeAudio(channels, [4096]);
    liar.format = { ...liar.format, frames: 2 ** 50, durationSeconds: 2 ** 50 / 48_000 };
    const result = await checkOpenedSet([
      { name: 'mix.wav', role: 'mix', audio: liar },
      { name: 'stem.wav', role: 'stem', audio: fakeAudio(channels, [4096]) },
    ]);
    expect(result.members.map((m) => m.frames)).toEqual([10_000, 10_000]);
    expect(result.residual?.frames).toBe(10_000);
  });
});

describe('constant memory', () => {
  setFlagsFromString('--expose-gc');
  const collectGarbage = runInNewContext('gc') as () => void;
  const retainedHeapBytes = () => {
    collectGarbage();
    return process.memoryUsage().heapUsed;
  };
  const RATE = 8000;
  const SECONDS = 3600;

  /** One hour of 16-bit stereo WAV bytes: a fixed noise second with a gain per member. */
  async function* wavStream(gain: number): AsyncGenerator<Uint8Array> {
    yield wavHeader({ sampleRate: RATE, channels: 2, bitsPerSample: 16, float: false, frames: RATE * SECONDS });
    const random = seededRandom(3);
    const noise = Float32Array.from({ length: RATE }, () => (random() - 0.5) * gain);
    const bytes = encodePcmFrames([noise, noise], 16, false);
    for (let second = 0; second < SECONDS; second++) yield bytes;
  }

  it('keeps retained heap growth under 4 MB between 10 minutes and an hour of a mix and three stems', async () => {
    const members = [
      { name: 'mix', role: 'mix' as const, audio: await openPcmStream(wavStream(0.6)) },
      ...[0.1, 0.2, 0.3].map(async (gain, i) => ({
        name: `stem ${i + 1}`,
        role: 'stem' as const,
        audio: await openPcmStream(wavStream(gain)),
      })),
    ];
    const opened = await Promise.all(members);
    let heapAt10Minutes = 0;
    const result = await checkOpenedSet(opened, {
      onStep: (frames) => {
        if (heapAt10Minutes === 0 && frames >= RATE * 600) heapAt10Minutes = retainedHeapBytes();
      },
    });
    const heapAtEnd = retainedHeapBytes();
    expect(result.members.map((m) => m.frames)).toEqual([
      RATE * SECONDS,
      RATE * SECONDS,
      RATE * SECONDS,
      RATE * SECONDS,
    ]);
    expect(result.residual?.frames).toBe(RATE * SECONDS);
    // Per 0.1 s window two Float64 values: 576 kB an hour (and presized from the declared length).
    expect(heapAtEnd - heapAt10Minutes).toBeLessThan(4 * 1024 * 1024);
  }, 300_000);
});
