// The head rules (line-up-tone, tone-separation, sync-pop), the head-silence rule with a tone,
// their flags and the report's head timecodes, on generated WAV files with known truth.
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { formatReport } from '../../src/cli/check.ts';
import { formatAnalysis } from '../../src/cli/format-analysis.ts';
import { openAudioFile } from '../../src/decode/index.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import {
  analysisOptionsForProfile,
  evaluate,
  FRAME_RATES,
  type FrameRate,
  type Profile,
  profileIssues,
  type Rule,
} from '../../src/profiles/index.ts';
import { decodeAll } from '../helpers/decode-all.ts';
import { compose, type Piece, RATE, seconds } from '../helpers/head-signals.ts';
import { checkFile, checkOf, tempDir } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

const frameStart = (frame: number, rate: FrameRate) =>
  Math.ceil((frame * RATE * rate.fpsDenominator) / rate.fpsNumerator - 1e-9);

interface HeadSpec {
  rate?: FrameRate;
  /** Frames (at `rate`) from the file's start. */
  programmeFrame?: number;
  programmeFrames?: number;
  toneSeconds?: number;
  toneDbfs?: number;
  pops?: boolean;
  timeReferenceSamples?: number;
}

let count = 0;
/** Tone from 0, programme from a frame, a pop 2 s (in label frames) before it and after its end, 1 s of silence after. */
async function headFile(spec: HeadSpec = {}): Promise<string> {
  const rate = spec.rate ?? FRAME_RATES['25'];
  const fps = rate.nominalFps;
  const programmeFrame = spec.programmeFrame ?? 6 * fps;
  const endFrame = programmeFrame + (spec.programmeFrames ?? 3 * fps);
  const pieces: Piece[] = [];
  for (const channel of [0, 1]) {
    const tone = seconds(spec.toneSeconds ?? 3);
    pieces.push({ kind: 'sine', channel, startFrame: 0, frames: tone, hz: 1000, levelDbfs: spec.toneDbfs ?? -18 });
    const start = frameStart(programmeFrame, rate);
    pieces.push({ kind: 'programme', channel, startFrame: start, frames: frameStart(endFrame, rate) - start });
    if (spec.pops === false) continue;
    for (const f of [programmeFrame - 2 * fps, endFrame + 2 * fps]) {
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
  const total = frameStart(endFrame + 3 * fps, rate);
  const path = join(dir, `head-${++count}.wav`);
  await writeWavFile(
    path,
    {
      sampleRate: RATE,
      channels: 2,
      bitsPerSample: 24,
      float: false,
      ...(spec.timeReferenceSamples !== undefined ? { timeReferenceSamples: spec.timeReferenceSamples } : {}),
    },
    [compose(2, total, pieces)],
  );
  return path;
}

function profile(rules: Rule[], frameRate: Profile['timecode'] = { frameRate: '25' }): Profile {
  return {
    id: 'head-test',
    name: 'Head test',
    version: '1.0.0',
    description: 'Line-up tone, sync pops and lead-in',
    basis: 'house rule',
    ...(frameRate ? { timecode: frameRate } : {}),
    rules,
  };
}

const ebuTone: Rule = {
  id: 'tone',
  type: 'line-up-tone',
  severity: 'fail',
  frequencyHz: 1000,
  levelDbfs: -18,
  minSeconds: 2,
  source: 'EBU R 68 alignment level (secondary)',
};
const pops: Rule[] = [
  { id: 'head-pop', type: 'sync-pop', severity: 'fail', source: 'common practice' },
  { id: 'tail-pop', type: 'sync-pop', severity: 'warn', position: 'tail', source: 'common practice' },
];

describe('head rules', () => {
  it('passes an EBU head: -18 dBFS tone, lead-in, pops on their frames; head silence counts back from the programme', async () => {
    const rules: Rule[] = [
      ebuTone,
      { id: 'separation', type: 'tone-separation', severity: 'fail', minGapSeconds: 0.5 },
      { id: 'lead-in', type: 'head-silence', severity: 'fail', minSeconds: 2.5 },
      ...pops,
    ];
    const report = await checkFile(await headFile(), profile(rules));
    expect(report.checks.filter((c) => !c.passed).map((c) => c.explanation)).toEqual([]);
    // 3 s from the tone's end to the programme start (the pop inside it), not 0 s before the tone.
    expect(Math.abs(Number(checkOf(report, 'lead-in').measured) - 3)).toBeLessThan(0.001);
    expect(checkOf(report, 'head-pop').measured).toBe(0);
    expect(checkOf(report, 'tail-pop').measured).toBe(0);
    expect(report.headTimecode).toEqual({
      toneStart: '00:00:00:00',
      toneEnd: '00:00:03:00',
      headPop: '00:00:04:00',
      programmeStart: '00:00:06:00',
      programmeEnd: '00:00:09:00',
      tailPop: '00:00:11:00',
    });
    expect(formatReport(report)).toContain(
      'head     tone 1000.0 Hz at -18.00 dBFS 00:00:00:00 - 00:00:03:00, pop 00:00:04:00, programme from 00:00:06:00, tail pop 00:00:11:00\n',
    );
    const kinds = report.flags.map((f) => `${f.kind} ${f.severity} ${f.startTimecode}`);
    expect(kinds).toContain('sync_pop remark 00:00:04:00');
    expect(kinds).toContain('sync_pop remark 00:00:11:00');
    expect(kinds.filter((k) => k.startsWith('line_up_tone remark 00:00:00:00'))).toHaveLength(2);
  });

  it('fails a -18 dBFS tone against a -20 dBFS (SMPTE RP 155) level, and any tone where tone is forbidden', async () => {
    const path = await headFile();
    const rp155: Rule = { ...ebuTone, id: 'tone', levelDbfs: -20, source: 'SMPTE RP 155 (secondary)' };
    const report = await checkFile(
      path,
      profile([rp155, { id: 'none', type: 'line-up-tone', severity: 'warn', presence: 'forbidden' }]),
    );
    const tone = checkOf(report, 'tone');
    expect(tone.passed).toBe(false);
    expect(tone.explanation).toMatch(/-18\.00 dBFS, not -20 \+\/- 0\.5 dB/);
    expect(checkOf(report, 'none').passed).toBe(false);
    expect(report.flags.filter((f) => f.kind === 'line_up_tone').map((f) => f.severity)).toEqual(['fail', 'fail']);
  });

  it('fails a tone that runs straight into the programme, flagged at the programme start', async () => {
    const path = await headFile({ toneSeconds: 6, pops: false });
    const report = await checkFile(path, profile([{ id: 'separation', type: 'tone-separation', severity: 'fail' }]));
    expect(checkOf(report, 'separation').passed).toBe(false);
    const flag = report.flags.find((f) => f.kind === 'tone_into_programme');
    expect(flag?.severity).toBe('fail');
    // Within a 50 ms tick (two frames at 25 fps) of 6 s.
    expect(Math.abs((flag?.endSeconds ?? 0) - 6)).toBeLessThanOrEqual(0.05);
  });

  it('fails missing pops and flags where they were expected', async () => {
    const report = await checkFile(await headFile({ pops: false }), profile(pops));
    expect(checkOf(report, 'head-pop').passed).toBe(false);
    expect(checkOf(report, 'head-pop').explanation).toBe('Head sync pop not found (expected at 00:00:04:00)');
    expect(checkOf(report, 'tail-pop').explanation).toBe('Tail sync pop not found');
    const missing = report.flags.filter((f) => f.kind === 'sync_pop_missing');
    expect(missing.map((f) => [f.startTimecode, f.severity])).toEqual([['00:00:04:00', 'fail']]);
  });

  it('judges a pop at a timecode from the BWF time reference (EBU Tech 3285 TimeReference), to the frame', async () => {
    const path = await headFile({ timeReferenceSamples: 10 * 3600 * RATE });
    const at = (atTimecode: string): Rule => ({ id: 'pop', type: 'sync-pop', severity: 'fail', atTimecode });
    const on = await checkFile(path, profile([at('10:00:04:00')]));
    expect(checkOf(on, 'pop').passed).toBe(true);
    expect(on.headTimecode.headPop).toBe('10:00:04:00');
    const off = await checkFile(path, profile([at('10:00:04:02')]));
    expect(checkOf(off, 'pop').measured).toBe(-2);
    expect(checkOf(off, 'pop').explanation).toMatch(/2 frames early against 10:00:04:02/);
  });

  it('counts the offset in label frames at 29.97 drop-frame (60 frames = 2 s of timecode)', async () => {
    const rate = FRAME_RATES['29.97-df'];
    const path = await headFile({ rate, programmeFrame: 300 });
    const report = await checkFile(path, profile(pops, { frameRate: '29.97-df' }));
    expect(checkOf(report, 'head-pop').measured).toBe(0);
    expect(checkOf(report, 'tail-pop').measured).toBe(0);
    expect(report.headTimecode.headPop).toBe('00:00:08;00');
    expect(report.headTimecode.programmeStart).toBe('00:00:10;00');
  });

  it('fails, without a crash, a timecode that does not exist at the frame rate; the schema refuses a tail pop at a timecode', async () => {
    const path = await headFile();
    // Frame 25 does not exist at 25 fps; 00:01:00;00 is a dropped label at 29.97 drop-frame (SMPTE ST 12-1).
    const report = await checkFile(
      path,
      profile([{ id: 'pop', type: 'sync-pop', severity: 'fail', atTimecode: '00:00:04:25' }]),
    );
    expect(checkOf(report, 'pop').outcome).toBe('not_measurable');
    expect(checkOf(report, 'pop').passed).toBe(false);
    const df = await checkFile(
      path,
      profile([{ id: 'pop', type: 'sync-pop', severity: 'fail', atTimecode: '00:01:00;00' }], {
        frameRate: '29.97-df',
      }),
    );
    expect(checkOf(df, 'pop').explanation).toMatch(/00:01:00;00 is not a timecode at 29.97-df fps/);
    const tail: Rule = { id: 'pop', type: 'sync-pop', severity: 'fail', position: 'tail', atTimecode: '00:00:04:00' };
    expect(profileIssues(profile([tail])).map((i) => i.field)).toEqual(['rules[0].atTimecode']);
  });
});

describe('the line-up is not programme', () => {
  const gapRules: Rule[] = [
    { id: 'drop', type: 'dropouts', severity: 'fail', maxCount: 0, source: 'common practice' },
    { id: 'air', type: 'silence-gap', severity: 'fail', maxSeconds: 0.3, source: 'common practice' },
  ];

  it('its own silences (around the tone and the pops) are neither dropouts nor dead air', async () => {
    const path = await headFile();
    const p = profile(gapRules);
    const doc = await analyzeFile(path, { analysis: analysisOptionsForProfile(p) });
    // The meters see those silences: the rules must leave them out, not miss them.
    expect(doc.summary.allChannelDropouts).toBeGreaterThan(0);
    expect(doc.summary.longestInternalGapSeconds).toBeGreaterThan(1);
    const report = evaluate(p, doc);
    expect(checkOf(report, 'drop').passed).toBe(true);
    expect(checkOf(report, 'air').passed).toBe(true);
    expect(report.flags.filter((f) => f.severity !== 'remark')).toEqual([]);
  });

  it('a gap inside the programme after a line-up head still counts', async () => {
    // Tone 0-3 s, silence, programme 6-7 s, 0.5 s of digital silence, programme 7.5-9 s.
    const pieces: Piece[] = [0, 1].flatMap((channel): Piece[] => [
      { kind: 'sine', channel, startFrame: 0, frames: seconds(3), hz: 1000, levelDbfs: -18 },
      { kind: 'programme', channel, startFrame: seconds(6), frames: seconds(1) },
      { kind: 'programme', channel, startFrame: seconds(7.5), frames: seconds(1.5) },
    ]);
    const path = join(dir, 'head-gap-in-programme.wav');
    await writeWavFile(path, { sampleRate: RATE, channels: 2, bitsPerSample: 24, float: false }, [
      compose(2, seconds(10), pieces),
    ]);
    const report = await checkFile(path, profile(gapRules));
    expect(checkOf(report, 'air').passed).toBe(false);
    expect(Number(checkOf(report, 'air').measured)).toBeCloseTo(0.5, 2);
    const gapFlags = report.flags.filter((f) => f.severity === 'fail');
    expect(gapFlags.length).toBeGreaterThan(0);
    expect(gapFlags.every((f) => f.startSeconds >= 6.9 && f.startSeconds <= 7.1)).toBe(true);
  });
});

describe('programme loudness after a line-up', () => {
  it('integrated loudness starts at the programme start; the whole file is kept beside it', async () => {
    // Tone 0-3 s at -18 dBFS, pops, programme from 6 s (a 100 ms block boundary) to 9 s.
    const rate = FRAME_RATES['25'];
    const withHead = await headFile({ rate, pops: true });
    const doc = await analyzeFile(withHead, {});
    expect(doc.head.programmeStartFrame).toBe(seconds(6));
    expect(doc.summary.integratedFromSeconds).toBe(6);
    expect(formatAnalysis(doc)).toMatch(
      /Integrated loudness\s+-\d+\.\d LUFS from 6\.00 s, after the line-up \(whole file -\d+\.\d LUFS\)/,
    );
    // The same samples from the programme start, as a file of their own: the reference reading.
    const channelData = await decodeAll(await openAudioFile(withHead));
    const alone = join(dir, 'programme-alone.wav');
    await writeWavFile(alone, { sampleRate: RATE, channels: 2, bitsPerSample: 24, float: false }, [
      channelData.map((c) => c.subarray(seconds(6))),
    ]);
    const reference = await analyzeFile(alone, {});
    expect(doc.summary.integratedLufs).not.toBeNull();
    expect(Math.abs((doc.summary.integratedLufs ?? 0) - (reference.summary.wholeFileIntegratedLufs ?? 0))).toBeLessThan(
      1e-9,
    );
    // The -18 dBFS tone (about -18 LUFS) pulls the whole file's reading 1.2 LU away from the programme's.
    expect(Math.abs((doc.summary.wholeFileIntegratedLufs ?? 0) - (doc.summary.integratedLufs ?? 0))).toBeGreaterThan(1);
  });

  it('a short steady sine at the head (under LINE_UP_MIN_TONE_SECONDS) is programme: its gap still counts', async () => {
    // 0.6 s of 1 kHz, 0.5 s of digital silence, programme: an opening, not a line-up.
    const pieces: Piece[] = [0, 1].flatMap((channel): Piece[] => [
      { kind: 'sine', channel, startFrame: 0, frames: seconds(0.6), hz: 1000, levelDbfs: -18 },
      { kind: 'programme', channel, startFrame: seconds(1.1), frames: seconds(4) },
    ]);
    const path = join(dir, 'short-sine-opening.wav');
    await writeWavFile(path, { sampleRate: RATE, channels: 2, bitsPerSample: 24, float: false }, [
      compose(2, seconds(6), pieces),
    ]);
    const rules: Rule[] = [
      { id: 'air', type: 'silence-gap', severity: 'fail', maxSeconds: 0.3, source: 'common practice' },
    ];
    const p = profile(rules);
    const doc = await analyzeFile(path, { analysis: analysisOptionsForProfile(p) });
    expect(doc.head.toneSegments.length).toBeGreaterThan(0);
    expect(doc.summary.integratedFromSeconds).toBe(0);
    expect(doc.summary.integratedLufs).toBe(doc.summary.wholeFileIntegratedLufs);
    expect(checkOf(evaluate(p, doc), 'air').passed).toBe(false);
  });
});
