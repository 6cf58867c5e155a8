// Test-signal generator shared by `earmark selftest` and the test suite: sine segments at given
// levels, generated block by block (never a whole signal in memory).

import type { PcmBlock } from '../analysis/audio.ts';

export interface ToneSegment {
  seconds: number;
  /** Peak level per channel in dBFS (one value for all channels, or one per channel); null = digital silence. */
  peakDbfs: number | null | (number | null)[];
  frequencyHz?: number;
  /** Per-channel phase offsets in degrees. */
  phaseDegrees?: number | number[];
}

export interface SignalSpec {
  sampleRate: number;
  channels: number;
  segments: ToneSegment[];
  blockFrames?: number;
}

const perChannel = <T>(value: T | T[], channel: number): T => (Array.isArray(value) ? value[channel] : value);

/** Total frames: every segment is rounded to whole frames at its end. */
export function signalFrames(spec: SignalSpec): number {
  return Math.round(spec.segments.reduce((s, seg) => s + seg.seconds, 0) * spec.sampleRate);
}

/**
 * Yields planar blocks. Phase runs continuously across segments of one frequency, as in a
 * tone whose level is switched, and segment edges are rounded to the nearest frame.
 */
export function* toneBlocks(spec: SignalSpec): Generator<PcmBlock> {
  const blockFrames = spec.blockFrames ?? 65536;
  const edges: number[] = [];
  let seconds = 0;
  for (const seg of spec.segments) {
    seconds += seg.seconds;
    edges.push(Math.round(seconds * spec.sampleRate));
  }
  const total = edges[edges.length - 1] ?? 0;
  let segment = 0;
  for (let start = 0; start < total; start += blockFrames) {
    const frames = Math.min(blockFrames, total - start);
    const channelData = Array.from({ length: spec.channels }, () => new Float32Array(frames));
    for (let n = 0; n < frames; n++) {
      const frame = start + n;
      while (frame >= edges[segment]) segment++;
      const seg = spec.segments[segment];
      const w = (2 * Math.PI * (seg.frequencyHz ?? 1000) * frame) / spec.sampleRate;
      for (let c = 0; c < spec.channels; c++) {
        const level = perChannel(seg.peakDbfs, c);
        if (level === null) continue;
        const phase = ((perChannel(seg.phaseDegrees ?? 0, c) as number) * Math.PI) / 180;
        channelData[c][n] = Math.pow(10, level / 20) * Math.sin(w + phase);
      }
    }
    yield { channelData, frames };
  }
}

/** Deterministic pseudo-random numbers (mulberry32) so generated programme is reproducible. */
export function seededRandom(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export interface ProgrammeSpec {
  sampleRate: number;
  channels: number;
  seconds: number;
  seed: number;
  blockFrames?: number;
  /** Overall level of the noise bed in dBFS RMS. */
  levelDbfs?: number;
}

/**
 * Programme-like signal: pink-ish noise (one-pole filtered) plus a few tones, with slow level
 * changes of several dB, different per channel. Deterministic for a seed.
 */
export function* programmeBlocks(spec: ProgrammeSpec): Generator<PcmBlock> {
  const random = seededRandom(spec.seed);
  const blockFrames = spec.blockFrames ?? 65536;
  const total = Math.round(spec.seconds * spec.sampleRate);
  const base = Math.pow(10, (spec.levelDbfs ?? -28) / 20);
  const state = new Float64Array(spec.channels * 3);
  const toneHz = [220, 330, 1250, 4400].map((f) => f * (0.9 + 0.2 * random()));
  for (let start = 0; start < total; start += blockFrames) {
    const frames = Math.min(blockFrames, total - start);
    const channelData = Array.from({ length: spec.channels }, () => new Float32Array(frames));
    for (let n = 0; n < frames; n++) {
      const t = (start + n) / spec.sampleRate;
      const envelope =
        base * (1 + 0.8 * Math.sin((2 * Math.PI * t) / 17)) * (1 + 0.5 * Math.sin((2 * Math.PI * t) / 5.3));
      for (let c = 0; c < spec.channels; c++) {
        const white = random() * 2 - 1;
        // Three one-pole stages approximate a pink-ish spectrum.
        const s = c * 3;
        state[s] = 0.99 * state[s] + 0.1 * white;
        state[s + 1] = 0.9 * state[s + 1] + 0.3 * white;
        state[s + 2] = 0.5 * state[s + 2] + 0.5 * white;
        const noise = state[s] + state[s + 1] + state[s + 2];
        const tone =
          0.3 * Math.sin(2 * Math.PI * toneHz[c % 4] * t) + 0.2 * Math.sin(2 * Math.PI * toneHz[(c + 1) % 4] * t);
        channelData[c][n] = envelope * (noise + tone) * (c % 2 === 0 ? 1 : 0.8);
      }
    }
    yield { channelData, frames };
  }
}
