import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { defaultChannelLabels, type StreamInfo } from '../../src/analysis/audio.ts';
import { LevelMeter, type LevelResult } from '../../src/analysis/levels.ts';
import { hasTool } from '../helpers/tools.ts';

const fs = 48_000;
const stereo: StreamInfo = { sampleRate: fs, channels: 2, channelLabels: defaultChannelLabels(2) };
const mono: StreamInfo = { sampleRate: fs, channels: 1, channelLabels: defaultChannelLabels(1) };

function measure(info: StreamInfo, channels: Float32Array[], blockFrames = 65_536): LevelResult {
  const meter = new LevelMeter(info);
  const total = channels[0].length;
  for (let s = 0; s < total; s += blockFrames) {
    const e = Math.min(total, s + blockFrames);
    meter.push({ channelData: channels.map((c) => c.subarray(s, e)), frames: e - s });
  }
  return meter.result();
}

function signal(frames: number, f: (i: number) => number): Float32Array {
  const x = new Float32Array(frames);
  for (let i = 0; i < frames; i++) x[i] = f(i);
  return x;
}

// 997 Hz over 1 s at 48 kHz is a whole number of cycles, so the discrete mean of sin^2 is exactly 1/2.
const sine997 = (amplitude: number) => signal(fs, (i) => amplitude * Math.sin((2 * Math.PI * 997 * i) / fs));
const period = 480; // 100 Hz at 48 kHz
const triangle = signal(fs, (i) => 1 - 4 * Math.abs(((i + period / 4) % period) / period - 0.5));
const square = (a: number) => signal(fs, (i) => (i % period < period / 2 ? a : -a));
const sawtooth = signal(fs, (i) => -1 + (2 * (i % period)) / period);

describe('LevelMeter', () => {
  it('reads a full-scale sine at -3.0103 dBFS RMS and 0 dB AES17 (RMS = A/sqrt2, handbook; AES17-1998 3.3 full-scale amplitude)', () => {
    const ch = measure(mono, [sine997(1)]).channels[0];
    expect(ch.rmsDbfs).toBeCloseTo(-3.0103, 4);
    expect(ch.rmsAes17Db).toBeCloseTo(0, 4);
    expect(ch.samplePeakDbfs).toBeCloseTo(0, 6);
    expect(ch.crestFactorDb).toBeCloseTo(3.0103, 4); // crest sqrt2, handbook
  });

  it('scales with amplitude: a -20 dBFS-peak sine reads -23.0103 dBFS RMS (handbook)', () => {
    const ch = measure(mono, [sine997(0.1)]).channels[0];
    expect(ch.samplePeakDbfs).toBeCloseTo(-20, 5);
    expect(ch.rmsDbfs).toBeCloseTo(-23.0103, 4);
  });

  it('reads a triangle at A/sqrt3 and a sawtooth at A/sqrt3, crest sqrt3 (handbook)', () => {
    const tri = measure(mono, [triangle]).channels[0];
    expect(tri.samplePeakLinear).toBeCloseTo(1, 9);
    expect(tri.rmsLinear).toBeCloseTo(1 / Math.sqrt(3), 4);
    expect(tri.rmsDbfs).toBeCloseTo(-4.7712, 3);
    expect(tri.crestFactorDb).toBeCloseTo(4.7712, 3);
    const saw = measure(mono, [sawtooth]).channels[0];
    expect(saw.rmsLinear).toBeCloseTo(1 / Math.sqrt(3), 4);
    expect(saw.crestFactorDb).toBeCloseTo(4.7712, 3);
  });

  it('reads a square at RMS = A, crest 0 dB, +3.01 dB AES17 (handbook; AES17-1998 3.3.1)', () => {
    const ch = measure(mono, [square(0.5)]).channels[0];
    expect(ch.rmsLinear).toBe(0.5);
    expect(ch.crestFactorDb).toBe(0);
    expect(ch.rmsAes17Db).toBeCloseTo(20 * Math.log10(0.5) + 3.0103, 4);
  });

  it('reads a 1-LSB 16-bit square at -90.31 dBFS peak and RMS (20 log10 2^-15, handbook)', () => {
    const ch = measure(mono, [square(1 / 32768)]).channels[0];
    expect(ch.samplePeakDbfs).toBeCloseTo(-90.309, 3);
    expect(ch.rmsDbfs).toBeCloseTo(-90.309, 3);
  });

  it('measures the DC offset of a shifted sine (mean of a sine over whole cycles is 0, handbook)', () => {
    const ch = measure(mono, [signal(fs, (i) => 0.25 + 0.5 * Math.sin((2 * Math.PI * 997 * i) / fs))]).channels[0];
    expect(ch.dcOffsetLinear).toBeCloseTo(0.25, 7);
    expect(ch.dcOffsetDbfs).toBeCloseTo(20 * Math.log10(0.25), 5);
    // Mean square = DC^2 + (A^2)/2 (handbook: powers of orthogonal components add).
    expect(ch.rmsLinear).toBeCloseTo(Math.sqrt(0.0625 + 0.125), 6);
    expect(ch.samplePeakLinear).toBeCloseTo(0.75, 6);
  });

  it('keeps the sign of a negative DC offset and reports no dB for zero DC', () => {
    const neg = measure(mono, [signal(1000, () => -0.125)]).channels[0];
    expect(neg.dcOffsetLinear).toBe(-0.125);
    expect(neg.dcOffsetDbfs).toBeCloseTo(-18.0618, 4);
    expect(measure(mono, [square(0.5)]).channels[0].dcOffsetDbfs).toBeNull();
  });

  it('reports digital silence as null, never -Infinity or NaN', () => {
    const r = measure(mono, [new Float32Array(4800)]);
    const ch = r.channels[0];
    expect(ch.samplePeakDbfs).toBeNull();
    expect(ch.rmsDbfs).toBeNull();
    expect(ch.rmsAes17Db).toBeNull();
    expect(ch.crestFactorDb).toBeNull();
    expect(ch.dcOffsetDbfs).toBeNull();
    expect(r.all.peakChannel).toBeNull();
    expect(JSON.parse(JSON.stringify(r))).toEqual(r);
  });

  it('counts samples at or above full scale and, separately, above it', () => {
    const x = new Float32Array([0.5, 1, -1, 0.9999, 1.5, -2, 0]);
    const ch = measure(mono, [x]).channels[0];
    expect(ch.fullScaleSamples).toBe(4);
    expect(ch.overFullScaleSamples).toBe(2);
    expect(ch.samplePeakLinear).toBe(2);
  });

  it('aggregates channels: max peak and power-mean RMS', () => {
    const r = measure(stereo, [sine997(0.5), sine997(1)]);
    expect(r.all.peakChannel).toBe(1);
    expect(r.all.samplePeakDbfs).toBeCloseTo(0, 6);
    // (0.125 + 0.5) / 2 mean square
    expect(r.all.rmsLinear).toBeCloseTo(Math.sqrt(0.3125), 7);
    const half = measure(stereo, [sine997(1), new Float32Array(fs)]);
    expect(half.all.rmsDbfs).toBeCloseTo(-3.0103 - 3.0103, 4);
  });

  it('gives identical results however the stream is cut into blocks', () => {
    let seed = 1;
    const rand = () => ((seed = (seed * 1_103_515_245 + 12_345) >>> 0) / 2 ** 32) * 2 - 1;
    const chans = [signal(30_011, () => rand() * 0.8 + 0.01), signal(30_011, () => (rand() > 0.99 ? 1 : rand() * 0.3))];
    const whole = measure(stereo, chans, 1_000_000);
    expect(measure(stereo, chans, 7)).toEqual(whole);
    expect(measure(stereo, chans, 4096)).toEqual(whole);
    expect(measure(stereo, chans, 1)).toEqual(whole);
  });

  it.skipIf(!hasTool('sox'))('agrees with sox stats on peak, RMS and DC of a 16-bit file', () => {
    const frames = fs * 2;
    const pcm = new Int16Array(frames);
    for (let i = 0; i < frames; i++) pcm[i] = Math.round(8000 + 16000 * Math.sin((2 * Math.PI * 440 * i) / fs));
    const dir = mkdtempSync(join(tmpdir(), 'earmark-levels-'));
    try {
      const file = join(dir, 'tone.wav');
      writeFileSync(file, wav16(pcm, fs));
      // sox prints stats on stderr.
      const stats = spawnSync('/usr/bin/sox', [file, '-n', 'stats'], { encoding: 'utf8' }).stderr;
      const ours = measure(mono, [Float32Array.from(pcm, (v) => v / 32768)]).channels[0];
      expect(ours.samplePeakDbfs).toBeCloseTo(soxField(stats, 'Pk lev dB'), 2);
      expect(ours.rmsDbfs).toBeCloseTo(soxField(stats, 'RMS lev dB'), 2);
      expect(ours.dcOffsetLinear).toBeCloseTo(soxField(stats, 'DC offset'), 4);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

function soxField(stats: string, name: string): number {
  const line = stats.split('\n').find((l) => l.startsWith(name));
  if (!line) throw new Error(`sox stats has no ${name}`);
  return Number(line.slice(name.length).trim().split(/\s+/)[0]);
}

function wav16(samples: Int16Array, sampleRate: number): Buffer {
  const header = Buffer.alloc(44);
  header.write('RIFF', 0);
  header.writeUInt32LE(36 + samples.byteLength, 4);
  header.write('WAVEfmt ', 8);
  header.writeUInt32LE(16, 16);
  header.writeUInt16LE(1, 20);
  header.writeUInt16LE(1, 22);
  header.writeUInt32LE(sampleRate, 24);
  header.writeUInt32LE(sampleRate * 2, 28);
  header.writeUInt16LE(2, 32);
  header.writeUInt16LE(16, 34);
  header.write('data', 36);
  header.writeUInt32LE(samples.byteLength, 40);
  return Buffer.concat([header, Buffer.from(samples.buffer, samples.byteOffset, samples.byteLength)]);
}
