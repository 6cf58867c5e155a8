// The head meter (analysis/head.ts) on generated heads with known truth: line-up tone, silence,
// sync pops and programme, placed to the sample.
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { StreamInfo } from '../../src/analysis/audio.ts';
import { HeadMeter, type HeadResult } from '../../src/analysis/head.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { FRAME_RATES, framesAtSample, type FrameRate } from '../../src/profiles/timecode.ts';
import { compose, type Piece, RATE, seconds, toneThenProgramme } from '../helpers/head-signals.ts';
import { cut } from '../helpers/test-signals.ts';
import { hasTool } from '../helpers/tools.ts';
import { tempDir } from '../profiles/helpers.ts';

const labels = (n: number) => (n === 6 ? (['L', 'R', 'C', 'LFE', 'Ls', 'Rs'] as const) : (['L', 'R'] as const));

function measure(channels: Float32Array[], sizes: number[] = [65_536]): HeadResult {
  const info: StreamInfo = { sampleRate: RATE, channels: channels.length, channelLabels: [...labels(channels.length)] };
  const meter = new HeadMeter(info);
  for (const block of cut(channels, sizes)) meter.push(block);
  return meter.result();
}

/** First sample of a frame (frames from 00:00:00:00, no time reference). */
const frameStart = (frame: number, rate: FrameRate) =>
  Math.ceil((frame * RATE * rate.fpsDenominator) / rate.fpsNumerator - 1e-9);

describe('line-up tone', () => {
  // EBU R 68 / Tech 3304: alignment tone 1 kHz at -18 dBFS; SMPTE RP 155: -20 dBFS (facts of the trade, secondary).
  it.each([
    [-18, [65_536]],
    [-20, [65_536]],
    [-18, [4_097, 1, 7, 19_999]],
  ])('reads 1 kHz at %i dBFS, then 2 s of silence, then programme (blocks %j)', (levelDbfs, sizes) => {
    const head = measure(
      toneThenProgramme(2, { toneSeconds: 3, gapSeconds: 2, programmeSeconds: 3, levelDbfs }),
      sizes,
    );
    expect(head.toneSegments.map((s) => s.channel)).toEqual([0, 1]);
    for (const s of head.toneSegments) {
      // Closed form: the tone is generated at exactly 1000 Hz; a peak of A reads A (48 samples a
      // period put a sample on the crest); a sine's RMS is A/sqrt(2), -3.01 dB (handbook), and
      // the AES17 reading adds the 3.01 dB back (AES17-1998 3.3).
      expect(Math.abs(s.frequencyHz - 1000)).toBeLessThan(0.01);
      expect(Math.abs(s.peakDbfs - levelDbfs)).toBeLessThan(0.001);
      expect(Math.abs(s.rmsDbfs - (levelDbfs - 3.0103))).toBeLessThan(0.01);
      expect(Math.abs(s.rmsAes17Db - levelDbfs)).toBeLessThan(0.01);
      // The sine starts at phase 0: its first sample is 0, the second the first above -60 dBFS.
      expect(s.startFrame).toBe(1);
      expect(s.endFrame).toBe(seconds(3));
      expect(s.intoProgramme).toBe(false);
    }
    expect(head.programmeStartFrame).toBeGreaterThanOrEqual(seconds(5));
    expect(head.programmeStartFrame).toBeLessThan(seconds(5) + 10);
    expect(Math.abs((head.toneGapSeconds ?? 0) - 2)).toBeLessThan(10 / RATE);
    expect(head.toneIntoProgramme).toBe(false);
    expect([head.headPop, head.tailPop]).toEqual([null, null]);
  });

  it('finds a tone that runs straight into the programme', () => {
    const head = measure(toneThenProgramme(2, { toneSeconds: 3, gapSeconds: 0, programmeSeconds: 3 }));
    expect(head.toneIntoProgramme).toBe(true);
    expect(head.toneGapSeconds).toBe(0);
    // Within one 50 ms tick of the change.
    expect(Math.abs((head.programmeStartSeconds ?? 0) - 3)).toBeLessThanOrEqual(0.05);
  });

  it('reads an EBU Tech 3304-style 5.1 line-up: main tone, then one burst per channel, LFE at 80 Hz', () => {
    // Tech 3304 (secondary description): 3 s of 1 kHz on the main channels, then 0.5 s
    // identification bursts channel by channel; LFE a continuous 80 Hz.
    const main = [0, 1, 2, 4, 5];
    const pieces: Piece[] = [];
    main.forEach((channel, k) => {
      pieces.push({ kind: 'sine', channel, startFrame: 0, frames: seconds(3), hz: 1000, levelDbfs: -18 });
      pieces.push({
        kind: 'sine',
        channel,
        startFrame: seconds(3.5 + k),
        frames: seconds(0.5),
        hz: 1000,
        levelDbfs: -18,
      });
    });
    pieces.push({ kind: 'sine', channel: 3, startFrame: 0, frames: seconds(8), hz: 80, levelDbfs: -18 });
    for (let c = 0; c < 6; c++)
      pieces.push({ kind: 'programme', channel: c, startFrame: seconds(9), frames: seconds(2) });
    const head = measure(compose(6, seconds(11), pieces));
    main.forEach((channel, k) => {
      const mine = head.toneSegments.filter((s) => s.channel === channel);
      expect(mine.map((s) => [s.startFrame, s.endFrame])).toEqual([
        [1, seconds(3)],
        [seconds(3.5 + k) + 1, seconds(4 + k)],
      ]);
      for (const s of mine) expect(Math.abs(s.frequencyHz - 1000)).toBeLessThan(0.05);
    });
    const lfe = head.toneSegments.filter((s) => s.channel === 3);
    expect(lfe).toHaveLength(1);
    expect(Math.abs((lfe[0]?.frequencyHz ?? 0) - 80)).toBeLessThan(0.05);
    expect(lfe[0]?.endFrame).toBe(seconds(8));
    expect(Math.abs((head.programmeStartSeconds ?? 0) - 9)).toBeLessThan(10 / RATE);
  });

  it('finds no tone and no pop in programme noise, and the programme from its first sample', () => {
    const pieces: Piece[] = [0, 1].map((channel) => ({
      kind: 'programme',
      channel,
      startFrame: 0,
      frames: seconds(8),
    }));
    const head = measure(compose(2, seconds(8), pieces));
    expect(head.toneSegmentsTotal).toBe(0);
    expect(head.programmeStartFrame).toBeLessThan(10);
    expect([head.headPop, head.tailPop, head.headPops]).toEqual([null, null, 0]);
  });
});

describe('bounded state', () => {
  it('keeps at most 64 tone segments and 8 pops of a long head, counting every one', () => {
    const pieces: Piece[] = [];
    let at = 0;
    for (let k = 0; k < 70; k++, at += seconds(0.55))
      pieces.push({ kind: 'sine', channel: 0, startFrame: at, frames: seconds(0.45), hz: 1000, levelDbfs: -18 });
    for (let k = 0; k < 10; k++, at += seconds(0.3))
      pieces.push({ kind: 'sine', channel: 0, startFrame: at, frames: 1920, hz: 1000, levelDbfs: -18 });
    pieces.push({ kind: 'programme', channel: 0, startFrame: at + seconds(1), frames: seconds(1) });
    const head = measure(compose(2, at + seconds(2), pieces));
    expect([head.toneSegments.length, head.toneSegmentsTotal]).toEqual([64, 70]);
    expect(head.headPops).toBe(10);
    expect(head.headPop?.startFrame).toBe(seconds(70 * 0.55) + 1);
    expect(Math.abs((head.programmeStartSeconds ?? 0) - (at / RATE + 1))).toBeLessThan(10 / RATE);
  });
});

describe('sync pop', () => {
  // Common practice: one frame of 1 kHz 2 s before the first frame of action, and 2 s after the last.
  it.each(['25', '29.97-ndf', '29.97-df'] as const)('finds head and tail pops on their frames at %s fps', (id) => {
    const rate = FRAME_RATES[id];
    const twoSeconds = 2 * rate.nominalFps;
    const programmeFrame = 10 * rate.nominalFps;
    const endFrame = programmeFrame + 4 * rate.nominalFps;
    const popFrames = [programmeFrame - twoSeconds, endFrame + twoSeconds];
    const pieces: Piece[] = [];
    for (const channel of [0, 1]) {
      pieces.push({ kind: 'sine', channel, startFrame: 0, frames: seconds(3), hz: 1000, levelDbfs: -18 });
      const start = frameStart(programmeFrame, rate);
      pieces.push({ kind: 'programme', channel, startFrame: start, frames: frameStart(endFrame, rate) - start });
      for (const f of popFrames) {
        const s = frameStart(f, rate);
        pieces.push({
          kind: 'sine',
          channel,
          startFrame: s,
          frames: frameStart(f + 1, rate) - s,
          hz: 1000,
          levelDbfs: -18,
        });
      }
    }
    const total = frameStart(endFrame + twoSeconds + rate.nominalFps, rate);
    const head = measure(compose(2, total, pieces), [4_097, 1, 7, 19_999]);
    const frameOf = (sample: number | undefined) => framesAtSample(sample ?? -1, RATE, rate);
    expect(frameOf(head.headPop?.startFrame)).toBe(popFrames[0]);
    expect(frameOf(head.tailPop?.startFrame)).toBe(popFrames[1]);
    expect(frameOf(head.programmeStartFrame ?? undefined)).toBe(programmeFrame);
    for (const pop of [head.headPop, head.tailPop]) {
      expect(Math.abs((pop?.frequencyHz ?? 0) - 1000)).toBeLessThan(1);
      expect(pop?.channels).toEqual([0, 1]);
      expect(Math.abs((pop?.peakDbfs ?? 0) + 18)).toBeLessThan(0.01);
    }
    expect(Math.abs((head.programmeEndFrame ?? 0) - frameStart(endFrame, rate))).toBeLessThan(10);
  });

  it('takes no blip inside the programme, nor a click after it, for a pop', () => {
    const pieces: Piece[] = [];
    for (const channel of [0, 1]) {
      pieces.push({ kind: 'programme', channel, startFrame: 0, frames: seconds(3) });
      // A one-frame 1 kHz blip in a pause, with programme after it.
      pieces.push({ kind: 'sine', channel, startFrame: seconds(4), frames: 1920, hz: 1000, levelDbfs: -18 });
      pieces.push({ kind: 'programme', channel, startFrame: seconds(5), frames: seconds(3) });
    }
    const signal = compose(2, seconds(11), pieces);
    // A click (three full-scale samples) in the tail, 2 s after the programme.
    for (const x of signal) x.fill(0.9, seconds(10), seconds(10) + 3);
    const head = measure(signal);
    expect([head.headPop, head.tailPop]).toEqual([null, null]);
  });
});

describe('against ffmpeg', () => {
  it.skipIf(!hasTool('ffmpeg'))("reads ffmpeg's own 1 kHz sine as its astats filter does", async () => {
    const { dir, cleanup } = tempDir();
    try {
      // ffmpeg's sine source (its default amplitude, 1/8 from memory: astats reads -18.06 dBFS), 3 s, then 2 s of silence, 24-bit.
      const path = join(dir, 'tone.wav');
      const make = [
        '-hide_banner',
        '-nostats',
        '-f',
        'lavfi',
        '-i',
        'sine=frequency=1000:sample_rate=48000:duration=3',
      ];
      run([...make, '-af', 'apad=pad_dur=2', '-c:a', 'pcm_s24le', path]);
      const stats = run([...make, '-af', 'astats=measure_perchannel=none', '-f', 'null', '-']);
      const read = (name: string) => Number(new RegExp(`${name}: (-?[0-9.]+)`).exec(stats)?.[1]);
      const doc = await analyzeFile(path);
      const tone = doc.head.toneSegments[0];
      expect(doc.head.toneSegments).toHaveLength(1);
      // ffmpeg reads the whole tone, the meter its inner ticks: the same steady sine.
      expect(Math.abs((tone?.peakDbfs ?? 0) - read('Peak level dB'))).toBeLessThan(0.01);
      expect(Math.abs((tone?.rmsDbfs ?? 0) - read('RMS level dB'))).toBeLessThan(0.01);
      expect(Math.abs((tone?.frequencyHz ?? 0) - 1000)).toBeLessThan(0.05);
      expect(Math.abs((tone?.endSeconds ?? 0) - 3)).toBeLessThan(1 / RATE + 1e-9);
    } finally {
      cleanup();
    }
  });
});

/** Runs ffmpeg; its report (stderr). */
function run(args: string[]): string {
  const result = spawnSync('ffmpeg', ['-y', ...args], { encoding: 'utf8' });
  if (result.status !== 0) throw new Error(`ffmpeg failed: ${result.stderr}`);
  return result.stderr;
}
