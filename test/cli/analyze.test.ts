import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return {
    io: {
      stdout: (t: string) => {
        out.push(t);
      },
      stderr: (t: string) => {
        err.push(t);
      },
    },
    out: () => out.join(''),
    err: () => err.join(''),
  };
}

const dir = mkdtempSync(join(tmpdir(), 'earmark-cli-'));
const tonePath = join(dir, 'tone.wav');

beforeAll(async () => {
  // EBU Tech 3341 case 1 signal: stereo 1 kHz at -23 dBFS, 20 s -> -23.0 LUFS.
  const blocks = (function* () {
    for (const b of toneBlocks({ sampleRate: 48000, channels: 2, segments: [{ seconds: 20, peakDbfs: -23 }] }))
      yield b.channelData as Float32Array[];
  })();
  await writeWavFile(tonePath, { sampleRate: 48000, channels: 2, bitsPerSample: 24, float: false }, blocks);
});

describe('earmark analyze', () => {
  it('prints one JSON object with every contract key (--json)', async () => {
    const c = capture();
    expect(await main(['analyze', tonePath, '--json'], c.io)).toBe(0);
    const doc = JSON.parse(c.out());
    expect(doc.format.sampleRate).toBe(48000);
    expect(doc.format.channels).toBe(2);
    expect(doc.format.durationSeconds).toBe(20);
    // EBU Tech 3341 V4 Table 1 case 1: -23.0 +-0.1 LUFS, LRA of a steady tone about 0.
    expect(Math.abs(doc.summary.integratedLufs + 23)).toBeLessThan(0.1);
    expect(doc.summary.loudnessRangeLu).toBeLessThan(0.1);
    expect(Math.abs(doc.summary.maxMomentaryLufs + 23)).toBeLessThan(0.1);
    expect(Math.abs(doc.summary.maxShortTermLufs + 23)).toBeLessThan(0.1);
    // A sine's sample peak is its amplitude; RMS is 3.01 dB lower (handbook).
    expect(doc.summary.samplePeakDbfs).toBeCloseTo(-23, 1);
    expect(doc.summary.truePeakDbtp).toBeCloseTo(-23, 1);
    for (const ch of doc.channels) {
      expect(ch.rmsDbfs).toBeCloseTo(-26.01, 1);
      expect(ch.samplePeakDbfs).toBeCloseTo(-23, 1);
      expect(ch.truePeakDbtp).toBeCloseTo(-23, 1);
      expect(Math.abs(ch.dcOffset)).toBeLessThan(1e-4);
    }
    expect(Array.isArray(doc.events)).toBe(true);
    // Identical L and R: reported as a duplicated channel, with channel index and times.
    const duplicate = doc.events.find((e: { kind: string }) => e.kind === 'duplicate_channel');
    expect(duplicate).toMatchObject({ channel: 1, otherChannel: 0, startSeconds: 0, endSeconds: 20 });
    expect(doc.series.momentary.lufs).toHaveLength(200);
  });

  it('measures the fold-down only with --downmix (--channel-loudness adds each channel alone)', async () => {
    const plain = capture();
    expect(await main(['analyze', tonePath, '--json'], plain.io)).toBe(0);
    expect(JSON.parse(plain.out()).downmix).toMatchObject({ measured: false, mono: null, loRo: null });
    const c = capture();
    expect(await main(['analyze', tonePath, '--json', '--downmix', '--channel-loudness'], c.io)).toBe(0);
    const { downmix } = JSON.parse(c.out());
    // Identical L and R: the mono sum L + R is 3.01 LU louder than the stereo pair (closed form).
    expect(downmix.mono.compatibilityLossLu).toBeCloseTo(-3.01, 2);
    // Each channel alone: a -23 dBFS-peak 1 kHz sine reads -26.0 LKFS (BS.1770-5 eq. (2), one channel).
    for (const lufs of downmix.channelIntegratedLufs) expect(Math.abs(lufs + 26.01)).toBeLessThan(0.1);
  });

  it('prints a readable summary by default', async () => {
    const c = capture();
    expect(await main(['analyze', tonePath], c.io)).toBe(0);
    expect(c.out()).toMatch(/Integrated loudness\s+-23\.0 LUFS/);
    expect(c.out()).toMatch(/48000 Hz, 2 ch \(L R\), 24-bit/);
  });

  it('escapes control characters of the file name in the readable output', async () => {
    const hostile = join(dir, 'ident\u001b[31m\nFAKE LINE.wav');
    const blocks = (function* () {
      for (const b of toneBlocks({ sampleRate: 48000, channels: 1, segments: [{ seconds: 1, peakDbfs: -20 }] }))
        yield b.channelData as Float32Array[];
    })();
    await writeWavFile(hostile, { sampleRate: 48000, channels: 1, bitsPerSample: 16, float: false }, blocks);
    const c = capture();
    expect(await main(['analyze', hostile], c.io)).toBe(0);
    expect(c.out()).not.toContain('\u001b');
    expect(c.out()).toContain('ident\\u001b[31m\\u000aFAKE LINE.wav');
  });

  it('exits 3 with the error code on stderr for bad input, and writes nothing on stdout', async () => {
    const noise = join(dir, 'noise.wav');
    writeFileSync(noise, Buffer.from(Array.from({ length: 4096 }, (_, i) => (i * 7919) % 251)));
    const empty = join(dir, 'empty.mp3');
    writeFileSync(empty, '');
    const cases: [string[], string][] = [
      [['analyze', noise, '--json'], 'unsupported_format'],
      [['analyze', empty], 'empty_file'],
      [['analyze', join(dir, 'missing.wav')], 'file_not_found'],
      [['analyze', tonePath, '--clip-run', 'x'], 'invalid_argument'],
      [['analyze', tonePath, '--no-such-flag'], 'invalid_argument'],
      [['analyze'], 'invalid_argument'],
      [['frobnicate'], 'invalid_argument'],
    ];
    for (const [args, code] of cases) {
      const c = capture();
      expect(await main(args, c.io)).toBe(3);
      expect(c.err()).toMatch(new RegExp(`^error ${code}: `));
      expect(c.out()).toBe('');
    }
  });

  it('runs through the installed bin entry (npx earmark) as a separate process', () => {
    const result = spawnSync(process.execPath, ['bin/earmark.js', 'analyze', tonePath, '--json'], { encoding: 'utf8' });
    expect(result.status).toBe(0);
    expect(JSON.parse(result.stdout).format.channels).toBe(2);
    const bad = spawnSync(process.execPath, ['bin/earmark.js', 'analyze', join(dir, 'missing.wav')], {
      encoding: 'utf8',
    });
    expect(bad.status).toBe(3);
    expect(bad.stderr).toMatch(/^error file_not_found/);
    expect(execFileSync('npx', ['--no-install', 'earmark', 'help'], { encoding: 'utf8' })).toMatch(/usage/);
  });
});
