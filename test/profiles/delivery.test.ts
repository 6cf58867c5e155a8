// Delivery profiles: format, edges and defects on top of the standard's loudness and peak, every
// value with its source; house profiles cannot take a built-in's id.

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { writeWavFile } from '../../src/encode/wav.ts';
import { BUILTIN_PROFILES, builtinProfile, resolveProfile } from '../../src/profiles/index.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';
import { checkFile, checkOf, tempDir } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

const DELIVERY = ['delivery-broadcast-stereo', 'delivery-broadcast-5-1', 'delivery-online', 'delivery-podcast'];

/** A 997 Hz sine at `peakDbfs` in every channel, phase shifted per channel so none is a copy (stereo: reads peakDbfs LUFS, BS.1770-5), PCM at the given format. */
async function tone(
  name: string,
  o: { rate?: number; bits?: 16 | 24; channels?: number; peakDbfs: number | (number | null)[]; seconds?: number },
): Promise<string> {
  const path = join(dir, name);
  const sampleRate = o.rate ?? 48000;
  const channels = o.channels ?? 2;
  const blocks = [
    ...toneBlocks({
      sampleRate,
      channels,
      segments: [
        {
          seconds: o.seconds ?? 8,
          peakDbfs: o.peakDbfs,
          frequencyHz: 997,
          phaseDegrees: Array.from({ length: channels }, (_, c) => c * 50),
        },
      ],
    }),
  ].map((b) => [...b.channelData]);
  await writeWavFile(
    path,
    {
      sampleRate,
      channels,
      bitsPerSample: o.bits ?? 24,
      float: false,
      ...(channels === 6 ? { channelMask: 0x3f } : {}),
    },
    blocks,
  );
  return path;
}

describe('delivery profiles', () => {
  it('exist, and every rule names its source or says common practice', () => {
    for (const id of DELIVERY) {
      const p = builtinProfile(id);
      for (const r of p.rules) expect(r.source, `${id} ${r.id}`).toMatch(/EBU|ITU|AES|common practice/);
      expect(p.rules.find((r) => r.type === 'true-peak')).toMatchObject({ reading: 'reconstructed', maxDbtp: -1 });
      for (const type of [
        'clipping',
        'dropouts',
        'silence-gap',
        'dead-channel',
        'inverted-channels',
        'phase',
        'dc-offset',
        'sample-rate',
        'head-silence',
        'tail-silence',
      ]) {
        expect(
          p.rules.some((r) => r.type === type),
          `${id} has ${type}`,
        ).toBe(true);
      }
    }
  });

  it('a conforming 48 kHz 24-bit stereo programme at -23 LUFS passes the broadcast stereo delivery', async () => {
    const report = await checkFile(
      await tone('ok.wav', { peakDbfs: -23 }),
      builtinProfile('delivery-broadcast-stereo'),
    );
    expect(report.checks.filter((c) => !c.passed).map((c) => c.explanation)).toEqual([]);
    expect(report.verdict).toBe('pass');
  });

  it('a 44.1 kHz 16-bit file fails the broadcast rate and depth (48 kHz, 24-bit: common practice)', async () => {
    const report = await checkFile(
      await tone('cd.wav', { rate: 44100, bits: 16, peakDbfs: -23 }),
      builtinProfile('delivery-broadcast-stereo'),
    );
    expect(report.verdict).toBe('fail');
    expect(checkOf(report, 'sample-rate').passed).toBe(false);
    expect(checkOf(report, 'bit-depth').passed).toBe(false);
    // The online delivery takes 44.1 kHz 16-bit (common practice) at -18 LUFS.
    const online = await checkFile(
      await tone('cd-18.wav', { rate: 44100, bits: 16, peakDbfs: -18 }),
      builtinProfile('delivery-online'),
    );
    expect(online.checks.filter((c) => !c.passed).map((c) => c.ruleId)).toEqual([]);
  });

  it('5.1 needs six channels in L R C LFE Ls Rs order; a silent LFE only warns', async () => {
    const stereo = await checkFile(await tone('st.wav', { peakDbfs: -23 }), builtinProfile('delivery-broadcast-5-1'));
    expect(checkOf(stereo, 'layout').passed).toBe(false);
    // L R C at -27.77 dBFS each: 10 log10(3 * a^2 / 2) with the K gain = -23.0 LUFS (BS.1770-5 eq. (2), Table 3; LFE excluded).
    const level = -23 - 10 * Math.log10(1.5);
    const surround = await checkFile(
      await tone('51.wav', { channels: 6, peakDbfs: [level, level, level, null, -60, -61] }),
      builtinProfile('delivery-broadcast-5-1'),
    );
    expect(checkOf(surround, 'layout').passed).toBe(true);
    expect(surround.summary.integratedLufs).toBeCloseTo(-23, 1);
    expect(checkOf(surround, 'no-dead-channel')).toMatchObject({ passed: false, severity: 'warn' });
    expect(surround.verdict).toBe('warn');
  });

  it('judges the reconstructed true peak: a tone at -0.95 dBFS peak fails the -1 dBTP ceiling on both readings', async () => {
    const report = await checkFile(
      await tone('hot.wav', { peakDbfs: -0.95 }),
      builtinProfile('delivery-broadcast-stereo'),
    );
    expect(checkOf(report, 'true-peak')).toMatchObject({ passed: false, unit: 'dBTP' });
    expect(checkOf(report, 'true-peak').explanation).toMatch(/^Reconstructed true peak/);
    expect(report.flags.some((f) => f.kind === 'true_peak_over' && f.severity === 'fail')).toBe(true);
  });

  it('a house profile file cannot take a built-in id', async () => {
    const path = join(dir, 'copy.json');
    writeFileSync(path, JSON.stringify({ ...builtinProfile('ebu-r128'), description: 'tightened' }));
    await expect(resolveProfile(path)).rejects.toMatchObject({ code: 'invalid_profile', details: { field: 'id' } });
    expect(
      BUILTIN_PROFILES.filter((p) => p.id.startsWith('delivery-'))
        .map((p) => p.id)
        .sort(),
    ).toEqual([...DELIVERY].sort());
  });
});
