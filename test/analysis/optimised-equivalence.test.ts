// The product reads what independent references read: analyzeFile (one thread with odd decode
// blocks, two threads with the default ones) on short generated files, every reading of the
// analysis document compared with the straightforward loops in test/helpers/reference-meters.
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { EventKind } from '../../src/analysis/events.ts';
import { defaultChannelLabels } from '../../src/analysis/audio.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { openAudioFile } from '../../src/decode/index.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { programmeBlocks, seededRandom } from '../../src/selftest/signals.ts';
import {
  expectDocumentMatchesReferences,
  referenceReadings,
  type ReferenceSettings,
} from '../helpers/reference-meters/document-reference.ts';

const SETTINGS: ReferenceSettings = {
  loudness: { momentaryLimitLufs: -20, shortTermLimitLufs: -23 },
  overCeilingDbtp: -1,
  silence: { thresholdDbfs: -50, minDurationSeconds: 0.25 },
};
const ANALYSIS = { loudness: SETTINGS.loudness, silence: SETTINGS.silence };

function programme(
  sampleRate: number,
  channels: number,
  seconds: number,
  levelDbfs: number,
  seed: number,
): Float32Array[] {
  const out = Array.from({ length: channels }, () => new Float32Array(Math.round(seconds * sampleRate)));
  let at = 0;
  for (const block of programmeBlocks({ sampleRate, channels, seconds, seed, levelDbfs })) {
    block.channelData.forEach((x, c) => out[c].set(x, at));
    at += block.frames;
  }
  return out;
}

/** Sets x[from, to) (seconds) to `value(i)`. */
function paint(
  x: Float32Array,
  rate: number,
  fromSeconds: number,
  toSeconds: number,
  value: (i: number) => number,
): void {
  for (let i = Math.round(fromSeconds * rate); i < Math.round(toSeconds * rate); i++) x[i] = value(i);
}

/** `kinds`: the event kinds the case must produce, so no comparison is of empty lists. */
interface Case {
  rate: number;
  bits: 16 | 24 | 32;
  channelMask?: number;
  channels: Float32Array[];
  kinds: EventKind[];
}

const cases: Record<string, () => Case> = {
  // Loud stereo with overs; R in antiphase from 3 s to the end, so the 3 s window and the last,
  // exactly half-length window are judged for phase; dropouts in one channel and in both.
  'stereo programme, antiphase, dropouts (48 kHz float)': () => {
    const rate = 48_000;
    const [l, r] = programme(rate, 2, 7.5, -10, 21).map((x) => x.map((v) => 0.98 * Math.tanh(2.5 * v)));
    paint(r, rate, 3, 7.5, (i) => -l[i]);
    paint(l, rate, 1.2, 1.205, () => 0);
    for (const x of [l, r]) paint(x, rate, 2.5, 2.503, () => 0);
    return {
      rate,
      bits: 32,
      channels: [l, r],
      kinds: ['phase_problem', 'dropout', 'true_peak_over', 'reconstructed_over', 'loud_momentary', 'loud_short_term'],
    };
  },
  // Mono 16-bit at 44.1 kHz: a tone with silent head, gap and tail, a quiet stretch, short clip
  // runs, and a last stretch 11 dB down: about 9.5 LU under the blocks' mean, so the -10 LU
  // relative gate keeps it and any gate 1 LU tighter would not.
  'mono tone with gaps and clips (44.1 kHz, 16-bit)': () => {
    const rate = 44_100;
    const random = seededRandom(5);
    const x = Float32Array.from(
      { length: 4 * rate },
      (_, i) => (i < 2.7 * rate ? 0.125 : 0.125 * 10 ** (-11 / 20)) * Math.sin((2 * Math.PI * 997 * i) / rate),
    );
    paint(x, rate, 0, 0.5, () => 0);
    paint(x, rate, 1.5, 1.9, () => 0);
    paint(x, rate, 2.2, 2.202, () => 0);
    paint(x, rate, 2.6, 2.7, () => 0.001 * (random() - 0.5));
    paint(x, rate, 3.6, 4, () => 0);
    for (const [at, run] of [
      [1.0, [1, 1, 1]],
      [1.1, [1, 1]],
      [1.2, [-1, -1, -1, -1]],
      [1.3, [1, 1, 1, -1, -1, -1]],
    ] as const) {
      x.set(run, Math.round(at * rate));
    }
    return { rate, bits: 16, channels: [x], kinds: ['silence', 'clipping', 'dropout'] };
  },
  // 5.1 (24-bit): clipped fronts, LFE tone, a dead centre, Ls a copy of L, Rs R inverted.
  '5.1 with dead, copied and inverted channels (48 kHz, 24-bit)': () => {
    const rate = 48_000;
    const [l, r] = programme(rate, 2, 3.2, -14, 22).map((x) => x.map((v) => Math.max(-1, Math.min(1, 1.6 * v))));
    const lfe = Float32Array.from(l, (_, i) => 0.3 * Math.sin((2 * Math.PI * 50 * i) / rate));
    return {
      rate,
      bits: 24,
      channelMask: 0x3f,
      channels: [l, r, new Float32Array(l.length), lfe, l.slice(), r.map((v) => -v)],
      kinds: ['clipping', 'dead_channel', 'duplicate_channel', 'inverted_channel', 'silence'],
    };
  },
  // Quad at 44.1 kHz: R antiphase to L but below the -50 dBFS floor (never judged), Ls L inverted
  // (a phase problem and an inverted copy), Rs a near copy of L (1 % noise added).
  'quad with quiet antiphase and near copies (44.1 kHz float)': () => {
    const rate = 44_100;
    const random = seededRandom(9);
    const [l] = programme(rate, 1, 3.1, -18, 23);
    return {
      rate,
      bits: 32,
      channels: [l, l.map((v) => -0.003 * v), l.map((v) => -v), l.map((v) => v + 0.01 * v * (random() - 0.5))],
      kinds: ['phase_problem', 'inverted_channel', 'duplicate_channel'],
    };
  },
};

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'earmark-references-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** The samples and channel roles as the decoder delivers them (16- and 24-bit files are quantised). */
async function decoded(path: string): Promise<{ samples: Float32Array[]; labels: readonly string[] }> {
  const audio = await openAudioFile(path);
  const parts: Float32Array[][] = Array.from({ length: audio.format.channels }, () => []);
  for await (const block of audio.blocks) block.channelData.forEach((x, c) => parts[c].push(x.slice(0, block.frames)));
  const samples = parts.map((chunks) => {
    const out = new Float32Array(chunks.reduce((n, x) => n + x.length, 0));
    chunks.reduce((at, x) => {
      out.set(x, at);
      return at + x.length;
    }, 0);
    return out;
  });
  return { samples, labels: audio.format.channelLabels };
}

describe('analysis documents equal the independent references', () => {
  for (const [name, make] of Object.entries(cases)) {
    it(name, async () => {
      const { rate, bits, channelMask, channels, kinds } = make();
      const path = join(dir, `${name.replace(/\W+/g, '-')}.wav`);
      await writeWavFile(
        path,
        {
          sampleRate: rate,
          channels: channels.length,
          bitsPerSample: bits,
          float: bits === 32,
          ...(channelMask ? { channelMask } : {}),
        },
        [channels],
      );
      const { samples, labels } = await decoded(path);
      // The weights and the LFE exclusion follow the roles: the layouts are the usual ones.
      expect(labels).toEqual(defaultChannelLabels(channels.length));
      const reference = referenceReadings(samples, labels, rate, SETTINGS);
      for (const options of [{ threads: 1, decode: { maxBlockFrames: 4_097 } }, { threads: 2 }]) {
        const doc = await analyzeFile(path, { ...options, analysis: ANALYSIS });
        expectDocumentMatchesReferences(doc, reference, SETTINGS);
        for (const kind of kinds) expect(doc.eventCounts[kind], kind).toBeGreaterThan(0);
      }
    }, 60_000);
  }
});
