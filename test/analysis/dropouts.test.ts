// Dropout meter on generated programme: losses found to the sample, natural pauses, fades, head
// and tail silence, resting surround channels and quantised fades not. All values are ours
// (src/analysis/dropouts.ts, common practice where marked there).
import { describe, expect, it } from 'vitest';
import { defaultChannelLabels, type Meter, type StreamInfo } from '../../src/analysis/audio.ts';
import { DropoutMeter, type DropoutOptions, type DropoutResult } from '../../src/analysis/dropouts.ts';
import { DropoutMeter as ReferenceDropoutMeter } from '../helpers/reference-meters/dropouts.ts';
import { programmeBlocks, seededRandom } from '../../src/selftest/signals.ts';
import { EnvelopeBuilder } from '../../src/analysis/envelope.ts';
import { cut } from '../helpers/test-signals.ts';

const fs = 48_000;
/** The default near-silence threshold, -60 dBFS. */
const T = 0.001;
const CUTS = [[65_536], [4_097, 1, 7, 19_999], [1]];

const info = (channels: number): StreamInfo => ({
  sampleRate: fs,
  channels,
  channelLabels: defaultChannelLabels(channels),
});
const at = (seconds: number) => Math.round(seconds * fs);

type Make = new (info: StreamInfo, options?: DropoutOptions) => Meter<DropoutResult>;

function measure(
  channels: Float32Array[],
  options?: DropoutOptions,
  sizes = [65_536],
  Make: Make = DropoutMeter,
): DropoutResult {
  const meter = new Make(info(channels.length), options);
  for (const block of cut(channels, sizes)) meter.push(block);
  return meter.result();
}

/** As the runner pushes it: with the block envelope attached (the meter then skips quiet chunks inside runs). */
function measureWithEnvelope(
  channels: Float32Array[],
  options: DropoutOptions | undefined,
  sizes: number[],
): DropoutResult {
  const meter = new DropoutMeter(info(channels.length), options);
  const envelopes = new EnvelopeBuilder();
  for (const block of cut(channels, sizes)) meter.push({ ...block, envelope: envelopes.build(block) });
  return meter.result();
}

/** The same result whatever the block sizes (1 frame, odd sizes, 65536), with or without the envelope. */
function measureEveryCut(channels: Float32Array[], options?: DropoutOptions): DropoutResult {
  const whole = measure(channels, options);
  for (const sizes of CUTS.slice(1)) expect(measure(channels, options, sizes)).toEqual(whole);
  expect(measureWithEnvelope(channels, options, CUTS[1])).toEqual(whole);
  return whole;
}

const spans = (r: DropoutResult) => r.events.map((e) => [e.channel, e.startFrame, e.endFrame]);

/** Music-like programme: pink-ish noise and tones with a slow level envelope (selftest generator). */
function programme(channels: number, seconds: number, seed: number, levelDbfs = -20): Float32Array[] {
  const out = Array.from({ length: channels }, () => new Float32Array(at(seconds)));
  let from = 0;
  for (const block of programmeBlocks({ sampleRate: fs, channels, seconds, seed, levelDbfs })) {
    block.channelData.forEach((x, c) => out[c].set(x, from));
    from += block.frames;
  }
  return out;
}

/** Scales x[from, to) by a gain going linearly from g0 to g1. */
function ramp(x: Float32Array, from: number, to: number, g0: number, g1: number): void {
  for (let i = from; i < to; i++) x[i] *= g0 + ((g1 - g0) * (i - from)) / (to - from);
}

/** Test precondition: the programme sounds on both sides of [start, end), so the run is exactly that. */
function expectSoundingAround(x: Float32Array, start: number, end: number): void {
  expect(Math.abs(x[start - 1])).toBeGreaterThanOrEqual(T);
  expect(Math.abs(x[end])).toBeGreaterThanOrEqual(T);
}

/** Speech-like: band-limited noise syllables with 20-100 ms linear fades, pauses of 30-600 ms, some to digital zero, some to a -75 dBFS floor. */
function speech(seconds: number, seed: number): Float32Array {
  const random = seededRandom(seed);
  const x = new Float32Array(at(seconds));
  let lp = 0,
    lp2 = 0;
  for (let i = 0; i < x.length; i++) x[i] = 1.8e-4 * (2 * random() - 1); // room floor, peaks -75 dBFS
  let t = 0.2;
  while (t < seconds - 0.5) {
    const a = at(t);
    const b = a + at(0.02 + 0.08 * random());
    const c = b + at(0.05 + 0.3 * random());
    const d = c + at(0.02 + 0.08 * random());
    const level = 0.1 + 0.6 * random();
    const toZero = random() < 0.5;
    for (let i = a; i < d; i++) {
      const g = i < b ? (i - a) / (b - a) : i < c ? 1 : (d - i) / (d - c);
      lp = 0.7 * lp + 0.3 * (2 * random() - 1);
      lp2 = 0.5 * lp2 + 0.5 * lp;
      x[i] = level * g * (2.5 * lp2 + 0.3 * Math.sin((2 * Math.PI * 180 * i) / fs));
    }
    const pauseEnd = Math.min(x.length, d + at(0.03 + 0.57 * random()));
    if (toZero) x.fill(0, d, pauseEnd);
    t = pauseEnd / fs;
  }
  return x;
}

describe('DropoutMeter finds losses inside programme', () => {
  it('a 0.5 s digital-zero run in one channel of stereo programme, exact to the sample', () => {
    const [left, right] = programme(2, 3, 1);
    left.fill(0, at(1), at(1.5));
    expectSoundingAround(left, at(1), at(1.5));
    const r = measureEveryCut([left, right]);
    expect(spans(r)).toEqual([[0, 48_000, 72_000]]);
    expect(r.events[0]).toMatchObject({ kind: 'dropout', startSeconds: 1, endSeconds: 1.5 });
    expect(r.events[0].peakValue).toBeUndefined(); // digital zero has no level
    expect(r.channels).toEqual([
      { channel: 0, dropouts: 1, droppedSeconds: 0.5 },
      { channel: 1, dropouts: 0, droppedSeconds: 0 },
    ]);
    expect(r.all).toEqual({ dropouts: 0, droppedSeconds: 0 });
    expect(r.minDurationSeconds).toBe(0.001);
  });

  it('a 3 s run in one channel', () => {
    const [left, right] = programme(2, 6, 3);
    right.fill(0, at(2), at(5));
    expectSoundingAround(right, at(2), at(5));
    const r = measure([left, right]);
    expect(spans(r)).toEqual([[1, 96_000, 240_000]]);
    expect(r.channels[1]).toEqual({ channel: 1, dropouts: 1, droppedSeconds: 3 });
  });

  it('40 ms in all channels is one event with channel null', () => {
    const channels = programme(2, 3, 2);
    for (const x of channels) {
      x.fill(0, at(1), at(1.04));
      expectSoundingAround(x, at(1), at(1.04));
    }
    const r = measureEveryCut(channels);
    expect(spans(r)).toEqual([[null, 48_000, 49_920]]);
    expect(r.all).toEqual({ dropouts: 1, droppedSeconds: 0.04 });
    expect(r.channels.every((c) => c.dropouts === 0)).toBe(true);
  });

  it('finds 1 ms but not 0.9 ms with a 1 ms minimum', () => {
    const [left, right] = programme(2, 3, 4);
    left.fill(0, at(1), at(1) + 48); // 1 ms at 48 kHz
    left.fill(0, at(2), at(2) + 43); // 0.9 ms, rounded to frames
    expectSoundingAround(left, at(1), at(1) + 48);
    expectSoundingAround(left, at(2), at(2) + 43);
    const r = measureEveryCut([left, right], { minDurationSeconds: 0.001 });
    expect(spans(r)).toEqual([[0, 48_000, 48_048]]);
  });

  it('a fall to a -90 dBFS noise floor (codec or transmission loss), with its level', () => {
    const [left, right] = programme(2, 3, 5);
    const random = seededRandom(99);
    const floor = 10 ** (-90 / 20);
    for (let i = at(1.2); i < at(1.4); i++) left[i] = floor * (2 * random() - 1);
    expectSoundingAround(left, at(1.2), at(1.4));
    const r = measureEveryCut([left, right]);
    expect(spans(r)).toEqual([[0, at(1.2), at(1.4)]]);
    expect(r.events[0].peakValue).toBeLessThanOrEqual(-90);
    expect(r.events[0].peakValue).toBeGreaterThan(-91);
  });

  it('a run in one channel that outlasts the same run in the other: all channels, then the one', () => {
    const [left, right] = programme(2, 3, 6);
    left.fill(0, at(1), at(1.3));
    right.fill(0, at(1), at(1.1));
    const r = measureEveryCut([left, right]);
    // The left run is reported because the right channel sounds again inside it.
    expect(spans(r)).toEqual([
      [null, at(1), at(1.1)],
      [0, at(1), at(1.3)],
    ]);
  });

  it('orders events by start, then channel, though a later one finishes first; the cap keeps that order', () => {
    const [left, right, centre] = programme(3, 4, 7);
    left.fill(0, at(1), at(2)); // long, finishes last
    right.fill(0, at(1.2), at(1.25));
    right.fill(0, at(2.5), at(2.55));
    centre.fill(0, at(2.5), at(2.52)); // same start, finishes first, listed after channel 1
    right.fill(0, at(3), at(3.01));
    const r = measureEveryCut([left, right, centre], { maxEvents: 4 });
    expect(spans(r)).toEqual([
      [0, at(1), at(2)],
      [1, at(1.2), at(1.25)],
      [1, at(2.5), at(2.55)],
      [2, at(2.5), at(2.52)],
    ]);
    expect(r.eventsTotal).toBe(5);
    expect(r.eventsTruncated).toBe(true);
    expect(r.channels.map((c) => c.dropouts)).toEqual([1, 3, 1]);
    // Stereo: while the left is out, a loss in the right leaves every channel silent: one all-channel event.
    expect(spans(measure([left, right]))).toEqual([
      [0, at(1), at(2)],
      [null, at(1.2), at(1.25)],
      [1, at(2.5), at(2.55)],
      [1, at(3), at(3.01)],
    ]);
  });

  it('a cut softened by a 2 ms fade is a dropout; a 20 ms fade into the same gap is not', () => {
    const [left, right] = programme(2, 3, 8);
    const soft = [left.slice(), right];
    ramp(soft[0], at(1) - 96, at(1), 1, 0);
    soft[0].fill(0, at(1), at(1.2));
    expect(measure(soft).channels[0].dropouts).toBe(1);
    const faded = [left.slice(), right];
    ramp(faded[0], at(1) - 960, at(1), 1, 0);
    faded[0].fill(0, at(1), at(1.2));
    expect(measure(faded).events).toEqual([]);
  });

  it('a run longer than maxDurationSeconds (10 s, our choice) is not a dropout', () => {
    const [left, right] = programme(2, 14, 9);
    left.fill(0, at(1), at(12));
    expect(measure([left, right]).events).toEqual([]);
    expect(measure([left, right], { maxDurationSeconds: 12 }).channels[0].dropouts).toBe(1);
  });
});

describe('DropoutMeter windows, to the sample', () => {
  /** Alternating +/-level: every sample has |x| = level exactly. */
  const square = (frames: number, level: number) =>
    Float32Array.from({ length: frames }, (_, i) => (i % 2 ? -level : level));
  const s = 24_000;
  const e = 26_400;
  /** Mono at -50 dBFS (sounding, but less than 20 dB over -60 dBFS), zero over [s, e), a -26 dBFS sample before and after. */
  function quiet(before: number, after: number): Float32Array {
    const x = square(2 * e, 0.003);
    x.fill(0, s, e);
    x[before] = 0.05;
    x[after] = 0.05;
    return x;
  }
  const found = (channels: Float32Array[], options?: DropoutOptions) => measureEveryCut(channels, options).eventsTotal;

  it('rule 2: the loudest sample of the 1 ms (48 frames) before the run counts; one earlier does not', () => {
    expect(found([quiet(s - 48, e)])).toBe(1);
    expect(found([quiet(s - 49, e)])).toBe(0);
  });

  it('rule 4: the signal resumes within the 48 frames from the end of the run', () => {
    expect(found([quiet(s - 1, e + 47)])).toBe(1);
    expect(found([quiet(s - 1, e + 48)])).toBe(0);
  });

  it('rule 3: a sample 20.01 dB above the edge level within the 30 ms (1440 frames) before the edge window makes it a fade', () => {
    const fade = (at: number) => {
      const x = square(2 * e, 0.05);
      x.fill(0, s, e);
      x[at] = 0.05 * 10 ** (20.01 / 20);
      return x;
    };
    expect(found([fade(s - 48 - 1440)])).toBe(0);
    expect(found([fade(s - 48 - 1441)])).toBe(1);
    expect(found([fade(s - 49)])).toBe(0);
    expect(found([fade(s - 48)])).toBe(1); // inside the edge window it raises the edge level instead
  });

  it('rule 5: channels that drop within 1 ms of each other (start and end) are one all-channel event', () => {
    const pair = (leftEarly: number, leftLate: number) => {
      const left = square(2 * e, 0.05);
      const right = square(2 * e, 0.05);
      left.fill(0, s - leftEarly, e + leftLate);
      right.fill(0, s, e);
      return spans(measureEveryCut([left, right]));
    };
    expect(pair(47, 47)).toEqual([[null, s, e]]);
    expect(pair(48, 0)).toEqual([
      [0, s - 48, e],
      [null, s, e],
    ]);
    expect(pair(0, 48)).toEqual([
      [null, s, e],
      [0, s, e + 48],
    ]);
  });
});

describe('DropoutMeter leaves natural silence alone', () => {
  it('speech-like material with 20-100 ms fades into pauses (digital zero or a -75 dBFS floor)', () => {
    const x = speech(30, 11);
    expect(x.filter((v) => v === 0).length).toBeGreaterThan(fs); // plenty of digital-zero pauses
    expect(measure([x]).eventsTotal).toBe(0);
    expect(measure([x, x.slice()]).eventsTotal).toBe(0);
    // The same talker on the centre of a 5.1 mix with quiet music in left and right.
    const [l, r] = programme(2, 30, 12, -40);
    expect(
      measure([l, r, x, new Float32Array(x.length), new Float32Array(x.length), new Float32Array(x.length)])
        .eventsTotal,
    ).toBe(0);
  });

  it('a fade-out to digital silence at the tail, a hard cut at the tail, digital silence at the head', () => {
    const faded = programme(2, 5, 13);
    for (const x of faded) {
      ramp(x, at(3), at(4), 1, 0);
      x.fill(0, at(4));
    }
    expect(measure(faded).eventsTotal).toBe(0);
    const cutOff = programme(2, 5, 14);
    for (const x of cutOff) x.fill(0, at(4));
    cutOff[0].fill(0, at(3)); // one channel first: nothing resumes after either
    expect(measure(cutOff).eventsTotal).toBe(0);
    const head = programme(2, 5, 15);
    for (const x of head) x.fill(0, 0, at(1.5)); // programme starts hard after 1.5 s of digital silence
    head[1].fill(0, 0, at(1.6));
    expect(measure(head).eventsTotal).toBe(0);
  });

  it('a 5.1 mix whose surrounds and LFE rest at zero for long stretches with gradual fades; a real loss in the centre is still found', () => {
    const seconds = 40;
    const [l, r, c, lfe, ls, rs] = programme(6, seconds, 16);
    for (let i = 0; i < lfe.length; i++)
      lfe[i] = 0.3 * Math.sin((2 * Math.PI * 45 * i) / fs) * (0.6 + 0.4 * Math.sin((2 * Math.PI * i) / fs / 3));
    // Surrounds: play, fade out over 0.3-2 s, rest at zero, fade back in.
    const rests: [Float32Array, number, number, number][] = [
      [ls, 3, 15, 0.3],
      [rs, 3.5, 20, 2],
      [ls, 22, 30, 1],
      [rs, 25, 36, 0.5],
      [lfe, 5, 12, 0.4],
      [lfe, 18, 33, 1.5],
    ];
    for (const [x, from, to, fade] of rests) {
      ramp(x, at(from - fade), at(from), 1, 0);
      x.fill(0, at(from), at(to));
      ramp(x, at(to), at(to + fade), 0, 1);
    }
    c.fill(0, at(8), at(8.5));
    expectSoundingAround(c, at(8), at(8.5));
    const result = measure([l, r, c, lfe, ls, rs]);
    expect(spans(result)).toEqual([[2, at(8), at(8.5)]]);
  });

  it('a 16-bit quantised quiet fade that decays through runs of exact zeros', () => {
    const [left, right] = programme(2, 6, 17, -40);
    for (const x of [left, right]) {
      for (let i = at(1); i < at(3); i++) x[i] *= 10 ** ((-80 * (i - at(1))) / at(2) / 20); // -40 dBFS programme down by 80 dB
      x.fill(0, at(3), at(3.5)); // then digital zero, and the programme returns hard
      for (let i = 0; i < x.length; i++) x[i] = Math.round(x[i] * 32_768) / 32_768;
    }
    // Precondition: zero runs of at least 1 ms between +/-1 LSB samples inside the fade.
    let longestZeros = 0;
    for (let i = at(1), run = 0; i < at(2.99); i++) {
      run = left[i] === 0 ? run + 1 : 0;
      longestZeros = Math.max(longestZeros, run);
    }
    expect(longestZeros).toBeGreaterThanOrEqual(48);
    expect(measure([left, right]).eventsTotal).toBe(0);
    // Even with the threshold below one LSB, so that the zero runs themselves are the runs.
    expect(measure([left, right], { thresholdDbfs: -100 }).eventsTotal).toBe(0);
  });
});

/** A bit of everything, some cases only in some channels. */
function varied(channels: number): Float32Array[] {
  const xs = programme(channels, 6, 20 + channels);
  const random = seededRandom(channels);
  const last = xs[channels - 1];
  xs[0].fill(0, 0, at(0.1));
  xs[0].fill(0, at(0.5), at(1));
  for (const x of xs) x.fill(0, at(1.2), at(1.24));
  for (let i = at(1.5); i < at(1.7); i++) last[i] = 3e-5 * (2 * random() - 1);
  xs[0].fill(0, at(2), at(2.3));
  last.fill(0, at(2), at(2.1));
  xs[0].fill(0, at(2.6), at(2.6) + 48);
  xs[0].fill(0, at(2.7), at(2.7) + 43);
  for (const x of xs) {
    ramp(x, at(2.98), at(3), 1, 0);
    x.fill(0, at(3), at(3.1));
    ramp(x, at(3.1), at(3.12), 0, 1);
  }
  ramp(xs[0], at(3.5) - 96, at(3.5), 1, 0);
  xs[0].fill(0, at(3.5), at(3.6));
  for (let i = at(3.8); i < at(3.9); i++) last[i] = Math.round(last[i] * 16) / 1e4; // coarse, near-threshold steps
  for (const x of xs) {
    ramp(x, at(4), at(5), 1, 0.001);
    for (let i = at(4); i < at(5); i++) x[i] = Math.round(x[i] * 32_768) / 32_768;
    ramp(x, at(5.2), at(5.5), 1, 0);
    x.fill(0, at(5.5));
  }
  return xs;
}

describe('DropoutMeter equals the straightforward reference', () => {
  const variants: Record<string, DropoutOptions | undefined> = {
    defaults: undefined,
    // A high threshold and a short minimum: programme opens many runs; chunks are scanned sample by sample.
    'many short runs, capped': { thresholdDbfs: -40, minDropDb: 10, minDurationSeconds: 0.0002, maxEvents: 3 },
    'looser rules, short maximum': { minDropDb: 10, maxFadeDb: 30, maxDurationSeconds: 0.2 },
  };
  for (const channels of [1, 2, 6]) {
    const signal = varied(channels);
    for (const [name, options] of Object.entries(variants)) {
      it(`${channels} channel(s), ${name}`, () => {
        const expected = measure(signal, options, [65_536], ReferenceDropoutMeter);
        if (!options) expect(expected.eventsTotal).toBeGreaterThanOrEqual(channels === 1 ? 5 : 8);
        for (const sizes of [[65_536], [4_097, 1, 7, 19_999], [1_000_003]]) {
          expect(measure(signal, options, sizes)).toEqual(expected);
          expect(measureWithEnvelope(signal, options, sizes)).toEqual(expected);
        }
      });
    }
  }

  it('identical cut into single frames', () => {
    const signal = varied(2).map((x) => x.subarray(0, at(3.7)));
    expect(measure(signal, undefined, [1])).toEqual(measure(signal, undefined, [65_536], ReferenceDropoutMeter));
  });

  it('refuses bad options', () => {
    expect(() => new DropoutMeter(info(2), { minDurationSeconds: -1 })).toThrow(/minDurationSeconds/);
    expect(() => new DropoutMeter(info(2), { minDurationSeconds: 2, maxDurationSeconds: 1 })).toThrow(
      /maxDurationSeconds/,
    );
    expect(() => new DropoutMeter(info(2), { thresholdDbfs: Number.NaN })).toThrow(/finite/);
  });
});
