// NaN and Infinity in decoded audio: replaced by 0 and reported once, with the count and the
// first frame, on every path (float WAV and RF64 from a file or a stream, AIFF-C fl32/fl64, and
// the compressed decoders' output check). IEEE 754 binary32/binary64 encode NaN and Infinity as
// the all-ones exponent; float WAV is WAVE_FORMAT_IEEE_FLOAT (mmreg.h), AIFF-C 'fl32'/'fl64'.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { openAudioFile, openPcmStream, type DecodedAudio } from '../../src/decode/index.ts';
import { OutputCheck } from '../../src/decode/compressed-output.ts';
import type { Probe } from '../../src/decode/compressed-probe.ts';
import type { DecodeWarning } from '../../src/decode/types.ts';
import { aiffHeader, encodePcmFrames, wavHeader } from '../../src/encode/wav.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-non-finite-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const FRAMES = 5000;
/** A stereo ramp with NaN, +Infinity and -Infinity at known places; returns the planar samples and where the bad ones are. */
function signal(): { planar: Float32Array[]; bad: [channel: number, frame: number, value: number][] } {
  const planar = [
    Float32Array.from({ length: FRAMES }, (_, i) => 0.5 * Math.sin(i / 10)),
    Float32Array.from({ length: FRAMES }, (_, i) => 0.25 * Math.cos(i / 7)),
  ];
  const bad: [number, number, number][] = [
    [1, 1234, NaN],
    [0, 1300, Infinity],
    [0, 4000, -Infinity],
    [1, 4999, NaN],
  ];
  for (const [c, i, v] of bad) planar[c][i] = v;
  return { planar, bad };
}
async function collect(d: DecodedAudio): Promise<Float32Array[]> {
  const parts: Float32Array[][] = [];
  for await (const b of d.blocks) parts.push(b.channelData.map((c) => c.slice()));
  return Array.from({ length: d.format.channels }, (_, c) => Float32Array.from(parts.flatMap((p) => [...p[c]])));
}
function expectReplaced(out: Float32Array[], warnings: readonly DecodeWarning[]): void {
  const { planar, bad } = signal();
  for (const [c, i] of bad) planar[c][i] = 0;
  for (let c = 0; c < 2; c++) expect(out[c]).toEqual(planar[c]);
  expect(warnings).toEqual([
    {
      code: 'non_finite_samples',
      atFrame: 1234,
      count: 4,
      message: '4 non-finite samples (NaN or Infinity), the first at frame 1234; replaced by 0 for measurement',
    },
  ]);
}

describe('non-finite samples', () => {
  it.each([
    [32, false],
    [64, false],
    [32, true],
  ] as const)('float WAV %i-bit (RF64: %s) from a file: replaced by 0, one warning', async (bits, rf64) => {
    const { planar } = signal();
    const path = join(dir, `f${bits}${rf64 ? '-rf64' : ''}.wav`);
    writeFileSync(
      path,
      Buffer.concat([
        wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: bits, float: true, frames: FRAMES, rf64 }),
        encodePcmFrames(planar, bits, true),
      ]),
    );
    // Small blocks: the first bad sample is not in the first block and the count spans blocks.
    const d = await openAudioFile(path, { maxBlockFrames: 1000 });
    expectReplaced(await collect(d), d.warnings);
  });

  it('float WAV from a stream: the same', async () => {
    const { planar } = signal();
    const bytes = new Uint8Array(
      Buffer.concat([
        wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: 32, float: true, frames: FRAMES }),
        encodePcmFrames(planar, 32, true),
      ]),
    );
    const d = await openPcmStream(
      (async function* () {
        yield bytes;
      })(),
    );
    expectReplaced(await collect(d), d.warnings);
  });

  it.each(['fl32', 'fl64'] as const)('AIFF-C %s: the same', async (compression) => {
    const { planar } = signal();
    const bits = compression === 'fl64' ? 64 : 32;
    const path = join(dir, `f.${compression}.aifc`);
    writeFileSync(
      path,
      Buffer.concat([
        aiffHeader({ sampleRate: 48000, channels: 2, bitsPerSample: bits, frames: FRAMES, compression }),
        encodePcmFrames(planar, bits, true, { bigEndian: true }),
      ]),
    );
    const d = await openAudioFile(path);
    expectReplaced(await collect(d), d.warnings);
  });

  it('a consumer that stops early still gets the warning for what it read', async () => {
    const { planar } = signal();
    const path = join(dir, 'early.wav');
    writeFileSync(
      path,
      Buffer.concat([
        wavHeader({ sampleRate: 48000, channels: 2, bitsPerSample: 32, float: true, frames: FRAMES }),
        encodePcmFrames(planar, 32, true),
      ]),
    );
    const d = await openAudioFile(path, { maxBlockFrames: 2000 });
    for await (const b of d.blocks) {
      void b;
      break;
    }
    expect(d.warnings).toEqual([expect.objectContaining({ code: 'non_finite_samples', atFrame: 1234, count: 2 })]);
  });

  it('compressed decoder output: replaced by 0, one warning with the first frame across calls', () => {
    const probe: Probe = {
      codec: 'caf',
      encoding: 'pcm_f32be',
      sampleRate: 48000,
      channels: 2,
      bitsPerSample: 32,
      frames: 6000,
      framesSlack: 0,
      wholeFile: false,
      endMissing: false,
    };
    const warnings: DecodeWarning[] = [];
    const check = new OutputCheck(probe, 4096, warnings, Infinity);
    const out: Float32Array[][] = [];
    const call = (l: number[], r: number[], final = false) => {
      for (const b of check.take(
        { channelData: [Float32Array.from(l), Float32Array.from(r)], sampleRate: 48000 },
        final,
      ))
        out.push(b.channelData.map((c) => c.slice()));
    };
    call(
      new Array(3000).fill(0.1),
      new Array(3000).fill(-0.1).map((v, i) => (i === 2500 ? NaN : v)),
    );
    call(
      new Array(3000).fill(0.1).map((v, i) => (i === 10 ? Infinity : v)),
      new Array(3000).fill(-0.1).map((v, i) => (i === 20 ? -Infinity : v)),
      true,
    );
    for (const b of check.finish()) out.push(b.channelData.map((c) => c.slice()));
    expect(check.framesOut).toBe(6000);
    const right = Float32Array.from(out.flatMap((b) => [...b[1]]));
    expect(right[2500]).toBe(0);
    expect(right[3020]).toBe(0);
    expect(Float32Array.from(out.flatMap((b) => [...b[0]]))[3010]).toBe(0);
    expect(warnings).toEqual([
      {
        code: 'non_finite_samples',
        atFrame: 2500,
        count: 3,
        message: '3 non-finite samples (NaN or Infinity), the first at frame 2500; replaced by 0 for measurement',
      },
    ]);
  });
});
