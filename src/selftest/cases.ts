// The EBU Tech 3341 (V4, 2023) minimum-requirement signals and EBU Tech 3342 (V4, 2023)
// loudness-range signals, with the expected readings and tolerances of their Table 1.
// Used by `earmark selftest` and by test/analysis/compliance.test.ts.

import type { ChannelLabel, PcmBlock } from '../analysis/audio.ts';
import { defaultChannelLabels } from '../analysis/audio.ts';
import { LoudnessMeter } from '../analysis/loudness.ts';
import { TruePeakMeter } from '../analysis/true-peak.ts';
import { toneBlocks, type ToneSegment } from './signals.ts';

export type Reading =
  | 'integrated'
  | 'maxMomentary'
  | 'maxShortTerm'
  | 'loudnessRange'
  | 'truePeak'
  | 'shortTermSpread'
  | 'momentarySpread';

export interface ComplianceCase {
  id: string;
  source: string;
  description: string;
  reading: Reading;
  expected: number;
  /** Accepted deviation below and above the expected value. */
  toleranceBelow: number;
  toleranceAbove: number;
  sampleRate: number;
  channels: number;
  channelLabels?: ChannelLabel[];
  blocks: () => Iterable<PcmBlock>;
}

const SAMPLE_RATE = 48000;
const STEREO = 2;
const tones =
  (segments: ToneSegment[], channels = STEREO) =>
  () =>
    toneBlocks({ sampleRate: SAMPLE_RATE, channels, segments });
const silence = (seconds: number): ToneSegment => ({ seconds, peakDbfs: null });
const tone = (seconds: number, peakDbfs: number | (number | null)[]): ToneSegment => ({ seconds, peakDbfs });

function loudnessCase(
  id: string,
  description: string,
  reading: Reading,
  expected: number,
  segments: ToneSegment[],
  tolerance = 0.1,
  channels = STEREO,
): ComplianceCase {
  return {
    id,
    source: `EBU Tech 3341 V4 Table 1, case ${id.split('-')[1]}`,
    description,
    reading,
    expected,
    toleranceBelow: tolerance,
    toleranceAbove: tolerance,
    sampleRate: SAMPLE_RATE,
    channels,
    blocks: tones(segments, channels),
  };
}

function repeat(segments: ToneSegment[], times: number): ToneSegment[] {
  return Array.from({ length: times }, () => segments).flat();
}

/** A sine at `frequencyHz` with `amplitude` and phase, 10 ms raised-cosine fades, 1 s long. */
function truePeakSignal(frequencyHz: number, amplitude: number, phaseDegrees: number): () => Iterable<PcmBlock> {
  return function* () {
    const frames = SAMPLE_RATE;
    const fade = Math.round(0.01 * SAMPLE_RATE);
    const data = new Float32Array(frames);
    for (let n = 0; n < frames; n++) {
      const edge = Math.min(n, frames - 1 - n);
      const gain = edge < fade ? 0.5 - 0.5 * Math.cos((Math.PI * edge) / fade) : 1;
      data[n] =
        gain * amplitude * Math.sin((2 * Math.PI * frequencyHz * n) / SAMPLE_RATE + (phaseDegrees * Math.PI) / 180);
    }
    yield { channelData: [data, data.slice()], frames };
  };
}

function truePeakCase(
  caseNumber: number,
  frequencyHz: number,
  amplitude: number,
  phaseDegrees: number,
  expected: number,
): ComplianceCase {
  return {
    id: `3341-${caseNumber}`,
    source: `EBU Tech 3341 V4 Table 1, case ${caseNumber}`,
    description: `stereo ${frequencyHz} Hz, ${amplitude.toFixed(2)} FFS, phase ${phaseDegrees} deg`,
    reading: 'truePeak',
    expected,
    toleranceBelow: 0.4,
    toleranceAbove: 0.2,
    sampleRate: SAMPLE_RATE,
    channels: STEREO,
    blocks: truePeakSignal(frequencyHz, amplitude, phaseDegrees),
  };
}

function rangeCase(caseNumber: number, levels: number[], expected: number): ComplianceCase {
  return {
    id: `3342-${caseNumber}`,
    source: `EBU Tech 3342 V4 Table 1, case ${caseNumber}`,
    description: `stereo 1 kHz, 20 s each at ${levels.join(', ')} dBFS`,
    reading: 'loudnessRange',
    expected,
    toleranceBelow: 1,
    toleranceAbove: 1,
    sampleRate: SAMPLE_RATE,
    channels: STEREO,
    blocks: tones(levels.map((level) => tone(20, level))),
  };
}

export function complianceCases(): ComplianceCase[] {
  const cases: ComplianceCase[] = [];
  for (const reading of ['maxMomentary', 'maxShortTerm', 'integrated'] as const) {
    cases.push(loudnessCase('3341-1', `stereo 1 kHz -23 dBFS 20 s, ${reading}`, reading, -23, [tone(20, -23)]));
    cases.push(loudnessCase('3341-2', `stereo 1 kHz -33 dBFS 20 s, ${reading}`, reading, -33, [tone(20, -33)]));
  }
  cases.push(
    loudnessCase('3341-3', '10 s at -36 dBFS, 60 s at -23 dBFS, 10 s at -36 dBFS', 'integrated', -23, [
      tone(10, -36),
      tone(60, -23),
      tone(10, -36),
    ]),
  );
  cases.push(
    loudnessCase('3341-4', '-72, -36, -23, -36, -72 dBFS', 'integrated', -23, [
      tone(10, -72),
      tone(10, -36),
      tone(60, -23),
      tone(10, -36),
      tone(10, -72),
    ]),
  );
  cases.push(
    loudnessCase('3341-5', '20 s at -26 dBFS, 20.1 s at -20 dBFS, 20 s at -26 dBFS', 'integrated', -23, [
      tone(20, -26),
      tone(20.1, -20),
      tone(20, -26),
    ]),
  );
  cases.push({
    ...loudnessCase(
      '3341-6',
      '5.0 layout: L and R at -28 dBFS, C at -24 dBFS, Ls and Rs at -30 dBFS',
      'integrated',
      -23,
      [tone(20, [-28, -28, -24, -30, -30])],
      0.1,
      5,
    ),
    channelLabels: defaultChannelLabels(5),
  });
  cases.push(
    loudnessCase(
      '3341-9',
      '(1.34 s at -20 dBFS, 1.66 s at -30 dBFS) 5 times: short-term after 3 s',
      'shortTermSpread',
      -23,
      repeat([tone(1.34, -20), tone(1.66, -30)], 5),
    ),
  );
  cases.push(
    loudnessCase(
      '3341-12',
      '(0.18 s at -20 dBFS, 0.22 s at -30 dBFS) 25 times: momentary after 1 s',
      'momentarySpread',
      -23,
      repeat([tone(0.18, -20), tone(0.22, -30)], 25),
    ),
  );
  for (let i = 0; i < 20; i++) {
    cases.push({
      ...loudnessCase('3341-10', `${(i * 0.15).toFixed(2)} s silence, 3 s -23 dBFS`, 'maxShortTerm', -23, [
        silence(i * 0.15),
        tone(3, -23),
        silence(1),
      ]),
      id: `3341-10.${i}`,
    });
    cases.push({
      ...loudnessCase(
        '3341-11',
        `${(i * 0.15).toFixed(2)} s silence, 3 s at ${-38 + i} dBFS`,
        'maxShortTerm',
        -38 + i,
        [silence(i * 0.15), tone(3, -38 + i), silence(3 - i * 0.15)],
      ),
      id: `3341-11.${i}`,
    });
    cases.push({
      ...loudnessCase('3341-13', `${i * 20} ms silence, 400 ms -23 dBFS`, 'maxMomentary', -23, [
        silence(i * 0.02),
        tone(0.4, -23),
        silence(1),
      ]),
      id: `3341-13.${i}`,
    });
    cases.push({
      ...loudnessCase('3341-14', `${i * 20} ms silence, 400 ms at ${-38 + i} dBFS`, 'maxMomentary', -38 + i, [
        silence(i * 0.02),
        tone(0.4, -38 + i),
        silence(0.4 - i * 0.02),
      ]),
      id: `3341-14.${i}`,
    });
  }
  cases.push(truePeakCase(15, SAMPLE_RATE / 4, 0.5, 0, -6));
  cases.push(truePeakCase(16, SAMPLE_RATE / 4, 0.5, 45, -6));
  cases.push(truePeakCase(17, SAMPLE_RATE / 6, 0.5, 60, -6));
  cases.push(truePeakCase(18, SAMPLE_RATE / 8, 0.5, 67.5, -6));
  cases.push(truePeakCase(19, SAMPLE_RATE / 4, 1.41, 45, 3));
  cases.push(rangeCase(1, [-20, -30], 10));
  cases.push(rangeCase(2, [-20, -15], 5));
  cases.push(rangeCase(3, [-40, -20], 20));
  cases.push(rangeCase(4, [-50, -35, -20, -35, -50], 15));
  return cases;
}

export interface CaseOutcome {
  testCase: ComplianceCase;
  measured: number | null;
  passed: boolean;
}

/** Measures one case with the engine's own meters. Spread readings return the worst deviation. */
export function runComplianceCase(testCase: ComplianceCase): CaseOutcome {
  const info = {
    sampleRate: testCase.sampleRate,
    channels: testCase.channels,
    channelLabels: testCase.channelLabels ?? defaultChannelLabels(testCase.channels),
  };
  const loudness = new LoudnessMeter(info);
  const truePeak = new TruePeakMeter(info, { overCeilingDbtp: 100 });
  for (const block of testCase.blocks()) {
    if (testCase.reading === 'truePeak') truePeak.push(block);
    else loudness.push(block);
  }
  const measured = readValue(testCase, loudness, truePeak);
  const passed =
    measured !== null &&
    measured >= testCase.expected - testCase.toleranceBelow - 1e-9 &&
    measured <= testCase.expected + testCase.toleranceAbove + 1e-9;
  return { testCase, measured, passed };
}

function readValue(testCase: ComplianceCase, loudness: LoudnessMeter, truePeak: TruePeakMeter): number | null {
  if (testCase.reading === 'truePeak') return truePeak.result().truePeakDbtp;
  const result = loudness.result();
  switch (testCase.reading) {
    case 'integrated':
      return result.integratedLufs;
    case 'maxMomentary':
      return result.maxMomentaryLufs;
    case 'maxShortTerm':
      return result.maxShortTermLufs;
    case 'loudnessRange':
      return result.loudnessRangeLu;
    // The value farthest from the expected one once the window has filled (after 3 s / 1 s).
    case 'shortTermSpread':
      return farthest(result.shortTermLufs.subarray(30), testCase.expected);
    case 'momentarySpread':
      return farthest(result.momentaryLufs.subarray(10), testCase.expected);
  }
}

function farthest(values: Float64Array, expected: number): number | null {
  let worst: number | null = null;
  for (const v of values) {
    if (Number.isNaN(v)) return null;
    if (worst === null || Math.abs(v - expected) > Math.abs(worst - expected)) worst = v;
  }
  return worst;
}
