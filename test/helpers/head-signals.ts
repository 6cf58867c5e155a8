// Heads of deliveries with known truth: line-up tone, silence, sync pops and programme, placed to
// the sample, built as planar channels (seconds, not minutes).
import { programmeBlocks } from '../../src/selftest/signals.ts';

export const RATE = 48_000;

/** A piece of one channel: a sine (peak amplitude levelDbfs) or programme, from startFrame for frames. */
export type Piece =
  | { kind: 'sine'; channel: number; startFrame: number; frames: number; hz: number; levelDbfs: number }
  | { kind: 'programme'; channel: number; startFrame: number; frames: number; levelDbfs?: number };

export const seconds = (s: number) => Math.round(s * RATE);

/** Silence everywhere, then the pieces written in (sines start at phase 0). */
export function compose(channels: number, totalFrames: number, pieces: Piece[]): Float32Array[] {
  const out = Array.from({ length: channels }, () => new Float32Array(totalFrames));
  for (const p of pieces) {
    const x = out[p.channel];
    if (p.kind === 'sine') {
      const a = 10 ** (p.levelDbfs / 20);
      for (let i = 0; i < p.frames; i++) x[p.startFrame + i] = a * Math.sin((2 * Math.PI * p.hz * i) / RATE);
      continue;
    }
    let at = p.startFrame;
    const spec = { sampleRate: RATE, channels: 1, seconds: p.frames / RATE, seed: 5 + p.channel };
    for (const block of programmeBlocks({ ...spec, levelDbfs: p.levelDbfs ?? -24 })) {
      x.set(block.channelData[0].subarray(0, Math.min(block.frames, p.startFrame + p.frames - at)), at);
      at += block.frames;
    }
  }
  return out;
}

/** Tone, silence, programme on every channel: the common head. */
export function toneThenProgramme(
  channels: number,
  o: { toneSeconds: number; gapSeconds: number; programmeSeconds: number; hz?: number; levelDbfs?: number },
): Float32Array[] {
  const toneFrames = seconds(o.toneSeconds);
  const programmeStart = toneFrames + seconds(o.gapSeconds);
  const programmeFrames = seconds(o.programmeSeconds);
  const pieces: Piece[] = [];
  for (let c = 0; c < channels; c++) {
    pieces.push({
      kind: 'sine',
      channel: c,
      startFrame: 0,
      frames: toneFrames,
      hz: o.hz ?? 1000,
      levelDbfs: o.levelDbfs ?? -18,
    });
    pieces.push({ kind: 'programme', channel: c, startFrame: programmeStart, frames: programmeFrames });
  }
  return compose(channels, programmeStart + programmeFrames, pieces);
}
