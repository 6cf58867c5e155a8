// The package set check: stems summed against the mix in lockstep, lengths to the sample, rates
// and depths. Levels are checked against closed forms and against sox.

import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { writeWavFile } from '../../src/encode/wav.ts';
import { checkPackageSet, type PackageMemberInput } from '../../src/engine/package-set.ts';
import { hasTool } from '../helpers/tools.ts';
import { STEMS, writeStemSet } from '../helpers/stem-files.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-package-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const RATE = 48_000;
const SECONDS = 4;

function members(set: { stems: string[]; mix: string }): PackageMemberInput[] {
  return [{ path: set.mix, role: 'mix' }, ...set.stems.map((path) => ({ path, role: 'stem' as const }))];
}

const check = (id: string, result: Awaited<ReturnType<typeof checkPackageSet>>) => {
  const found = result.checks.find((c) => c.id === id);
  if (!found) throw new Error(`no check ${id}`);
  return found;
};

// Mean square of the mix: the stems are sines of different whole-period frequencies, so over whole
// seconds they are orthogonal and their powers add (A^2/2 each).
const MIX_MEAN_SQUARE = STEMS.reduce((sum, s) => sum + s.amplitude ** 2 / 2, 0);

describe('stems that sum to the mix', () => {
  it('float stems null against the float mix to within float32 rounding', async () => {
    const set = await writeStemSet({ dir, seconds: SECONDS, prefix: 'f32-' });
    const result = await checkPackageSet(members(set));
    expect(result.checks.every((c) => c.passed)).toBe(true);
    const r = result.residual;
    if (!r) throw new Error('no residual');
    expect(r.frames).toBe(SECONDS * RATE);
    // The mix rounds the float64 sum to float32: each sample's error is at most half an ulp,
    // 2^-24 of the value (IEEE 754 round to nearest), so the residual sits at most
    // 20 log10(2^-24) = -144.5 dB under the mix (closed form).
    expect(r.residualRelativeDb).not.toBeNull();
    expect(r.residualRelativeDb ?? 0).toBeLessThan(-144.4);
    expect(r.withinTolerance).toBe(true);
    expect(r.spansTotal).toBe(0);
    // Mix RMS: 10 log10(sum of A^2/2) for orthogonal sines (closed form).
    expect(r.mixRmsDbfs ?? 0).toBeCloseTo(10 * Math.log10(MIX_MEAN_SQUARE), 2);
  });

  it('24-bit integer stems whose integer sum is the mix leave a residual of digital silence', async () => {
    const set = await writeStemSet({ dir, seconds: SECONDS, bitsPerSample: 24, prefix: 'i24-' });
    const result = await checkPackageSet(members(set));
    const r = result.residual;
    if (!r) throw new Error('no residual');
    // Integer steps / 2^23 are exact in float32 and their float64 sum is exact: nothing remains.
    expect(r.residualRelativeDb).toBeNull();
    expect(r.residualPeakDbfs).toBeNull();
    expect(check('stems_sum_to_mix', result).passed).toBe(true);
    expect(result.members.map((m) => m.depth)).toEqual(['24-bit', '24-bit', '24-bit', '24-bit']);
  });

  it('16-bit stems and mix each TPDF-dithered leave the closed-form residual', async () => {
    const set = await writeStemSet({ dir, seconds: SECONDS, bitsPerSample: 16, dither: true, prefix: 'd16-' });
    const result = await checkPackageSet(members(set));
    const r = result.residual;
    if (!r) throw new Error('no residual');
    // TPDF dither of +/-1 LSB (variance q^2/6) then rounding (q^2/12, independent of the signal
    // under that dither) leaves q^2/4 per file: Lipshitz, Wannamaker, Vanderkooy, "Quantization
    // and dither: a theoretical survey", JAES 40(5), 1992 (from memory). Three stems and a mix:
    // 4 x q^2/4 = q^2, q = 2^-15, so 20 log10(2^-15) = -90.31 dBFS RMS.
    expect(r.residualRmsDbfs ?? 0).toBeCloseTo(20 * Math.log10(2 ** -15), 1);
    // Well inside our -60 dB default for a programme at this level.
    expect(r.withinTolerance).toBe(true);
  });
});

describe('stems that do not sum to the mix', () => {
  const muteStart = Math.round(1.25 * RATE);
  const muteEnd = Math.round(1.75 * RATE);

  it('a muted half second in one stem shows as a span at its time, within one window', async () => {
    const set = await writeStemSet({
      dir,
      seconds: SECONDS,
      prefix: 'mute-',
      mute: { stem: 1, startFrame: muteStart, endFrame: muteEnd },
    });
    const result = await checkPackageSet(members(set));
    const r = result.residual;
    if (!r) throw new Error('no residual');
    expect(check('stems_sum_to_mix', result).passed).toBe(false);
    expect(r.spansTotal).toBe(1);
    const [span] = r.spans;
    const window = r.windowFrames;
    expect(window).toBe(4800);
    expect(span.startFrame).toBeLessThanOrEqual(muteStart);
    expect(muteStart - span.startFrame).toBeLessThan(window);
    expect(span.endFrame).toBeGreaterThanOrEqual(muteEnd);
    expect(span.endFrame - muteEnd).toBeLessThan(window);
    // Residual = the missing stem: 1000 Hz, A = 0.1, for 0.5 s of 4 s (500 whole periods): mean
    // square (0.5/4) x A^2/2 on each channel, against the mix's sum of A^2/2 (closed form).
    const expected = 10 * Math.log10(((0.5 / SECONDS) * 0.1 ** 2) / 2 / MIX_MEAN_SQUARE);
    expect(r.residualRelativeDb ?? 0).toBeCloseTo(expected, 2);
    expect(r.residualPeakDbfs ?? 0).toBeCloseTo(20 * Math.log10(0.1), 2);
  });

  it.skipIf(!hasTool('sox'))('the residual level agrees with sox (stems mixed with the mix inverted)', async () => {
    const set = await writeStemSet({
      dir,
      seconds: SECONDS,
      prefix: 'sox-',
      mute: { stem: 1, startFrame: muteStart, endFrame: muteEnd },
    });
    const result = await checkPackageSet(members(set));
    const r = result.residual;
    if (!r) throw new Error('no residual');
    // sox -m with -v 1 per stem and -v -1 on the mix sums without sox's default 1/n scaling; its
    // stats effect prints "RMS lev dB" (20 log10 RMS, same reference as ours) per channel (sox(1)).
    const args = ['-m', ...set.stems.flatMap((s) => ['-v', '1', s]), '-v', '-1', set.mix, '-n', 'stats'];
    const sox = spawnSync('sox', args, { encoding: 'utf8' });
    expect(sox.status).toBe(0);
    const out = sox.stderr;
    const line = out.split('\n').find((l) => l.startsWith('RMS lev dB'));
    if (!line) throw new Error(`no RMS line in sox output: ${out}`);
    const [overall, left, right] = line.trim().split(/\s+/).slice(3).map(Number);
    expect(r.residualRmsDbfs ?? 0).toBeCloseTo(overall, 1);
    expect(r.channels[0].residualRmsDbfs ?? 0).toBeCloseTo(left, 1);
    expect(r.channels[1].residualRmsDbfs ?? 0).toBeCloseTo(right, 1);
  });

  it('a stem one sample short fails the length check, naming the sample counts', async () => {
    const set = await writeStemSet({ dir, seconds: SECONDS, prefix: 'short-', shorten: { stem: 2, frames: 1 } });
    const result = await checkPackageSet(members(set));
    const length = check('same_length', result);
    expect(length.passed).toBe(false);
    expect(length.explanation).toContain(`${SECONDS * RATE - 1} samples`);
    expect(length.explanation).toContain(`${SECONDS * RATE} samples`);
    expect(length.explanation).toContain('1 sample shorter');
    expect(result.members.map((m) => m.frames)).toEqual([
      RATE * SECONDS,
      RATE * SECONDS,
      RATE * SECONDS,
      RATE * SECONDS - 1,
    ]);
    // The sum is still measured over the shared length, and there it nulls.
    expect(result.residual?.frames).toBe(SECONDS * RATE - 1);
    expect(check('stems_sum_to_mix', result).passed).toBe(true);
  });

  it('a stem at another sample rate fails the rate check and the sum is not measured', async () => {
    const base = await writeStemSet({ dir, seconds: 1, prefix: 'rate48-' });
    const other = await writeStemSet({ dir, seconds: 1, sampleRate: 44_100, prefix: 'rate44-' });
    const result = await checkPackageSet([
      { path: base.mix, role: 'mix', name: 'mix.wav' },
      { path: base.stems[0], role: 'stem', name: 'a.wav' },
      { path: other.stems[1], role: 'stem', name: 'b.wav' },
    ]);
    const rate = check('same_sample_rate', result);
    expect(rate.passed).toBe(false);
    expect(rate.explanation).toContain('b.wav 44100 Hz');
    expect(result.residual).toBeNull();
    expect(check('stems_sum_to_mix', result).explanation).toContain('not measurable');
    expect(check('stems_sum_to_mix', result).passed).toBe(false);
  });

  it('a stem with another channel count or order fails stem_channels and is not summed', async () => {
    const set = await writeStemSet({ dir, seconds: 0.5, prefix: 'order-' });
    const mono = join(dir, 'order-mono.wav');
    const centre = join(dir, 'order-c-lfe.wav');
    const silence = (channels: number) => [Array.from({ length: channels }, () => new Float32Array(24_000))];
    await writeWavFile(mono, { sampleRate: RATE, channels: 1, bitsPerSample: 32, float: true }, silence(1));
    // dwChannelMask 0x0C: front centre and LFE (Microsoft WAVEFORMATEXTENSIBLE speaker bits).
    await writeWavFile(
      centre,
      { sampleRate: RATE, channels: 2, bitsPerSample: 32, float: true, channelMask: 0x0c },
      silence(2),
    );
    for (const [path, described] of [
      [mono, 'stem.wav 1 ch M'],
      [centre, 'stem.wav 2 ch C LFE'],
    ]) {
      const result = await checkPackageSet([
        { path: set.mix, role: 'mix', name: 'mix.wav' },
        { path: set.stems[0], role: 'stem', name: 'a.wav' },
        { path, role: 'stem', name: 'stem.wav' },
      ]);
      const channels = check('stem_channels', result);
      expect(channels.passed).toBe(false);
      expect(channels.explanation).toContain('mix.wav (2 ch L R)');
      expect(channels.explanation).toContain(described);
      expect(result.residual).toBeNull();
      expect(check('stems_sum_to_mix', result).passed).toBe(false);
    }
  });

  it('versions of one programme are compared on rate, depth and length only', async () => {
    const a = await writeStemSet({ dir, seconds: 1, prefix: 'va-' });
    const b = await writeStemSet({ dir, seconds: 1, bitsPerSample: 24, prefix: 'vb-' });
    const result = await checkPackageSet([
      { path: a.mix, role: 'version', name: 'en.wav' },
      { path: b.mix, role: 'version', name: 'fr.wav' },
    ]);
    expect(result.checks.map((c) => c.id)).toEqual(['same_sample_rate', 'same_bit_depth', 'same_length']);
    expect(check('same_bit_depth', result).explanation).toContain('fr.wav 24-bit');
    expect(result.residual).toBeNull();
  });

  it('refuses a package that is not one: stems without a mix, two mixes, one file', async () => {
    const set = await writeStemSet({ dir, seconds: 0.1, prefix: 'shape-' });
    await expect(
      checkPackageSet([
        { path: set.stems[0], role: 'stem' },
        { path: set.stems[1], role: 'stem' },
      ]),
    ).rejects.toMatchObject({
      code: 'invalid_argument',
    });
    await expect(
      checkPackageSet([
        { path: set.mix, role: 'mix' },
        { path: set.mix, role: 'mix' },
      ]),
    ).rejects.toMatchObject({
      code: 'invalid_argument',
    });
    for (const bad of [
      { windowSeconds: 0.001 },
      { windowSeconds: 61 },
      { toleranceDb: 0 },
      { toleranceDb: Number.NaN },
    ])
      await expect(
        checkPackageSet(
          [
            { path: set.mix, role: 'mix' },
            { path: set.stems[0], role: 'stem' },
          ],
          bad,
        ),
      ).rejects.toMatchObject({ code: 'invalid_argument' });
    await expect(checkPackageSet([{ path: set.mix, role: 'version' }])).rejects.toMatchObject({
      code: 'invalid_argument',
    });
    await expect(
      checkPackageSet([
        { path: set.mix, role: 'mix' },
        { path: join(dir, 'missing.wav'), role: 'stem', name: 'missing.wav' },
      ]),
    ).rejects.toMatchObject({ code: 'file_not_found', details: { member: 'missing.wav' } });
  });
});
