// Channel roles from a BW64 chna chunk (ITU-R BS.2088, IDs per ITU-R BS.2076, common definitions
// per ITU-R BS.2094) and from a declared layout (--layout, profile `layout`).
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { ChannelLabel } from '../../src/analysis/audio.ts';
import { channelWeight } from '../../src/analysis/k-weighting.ts';
import { LAYOUTS, type LayoutName } from '../../src/analysis/layouts.ts';
import { LoudnessMeter } from '../../src/analysis/loudness.ts';
import { main } from '../../src/cli/main.ts';
import { openAudioFile, type DecodedAudio } from '../../src/decode/index.ts';
import { encodePcmFrames, writeWavFile } from '../../src/encode/wav.ts';
import { EarmarkError } from '../../src/errors/index.ts';
import { parseProfile } from '../../src/profiles/index.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-layouts-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
let counter = 0;
const tmpFile = () => join(dir, `f${counter++}.wav`);

// ---- independent byte builders ----
const le16 = (v: number): number[] => [v & 0xff, (v >> 8) & 0xff];
const le32 = (v: number): number[] => [v & 0xff, (v >>> 8) & 0xff, (v >>> 16) & 0xff, (v >>> 24) & 0xff];
const le64 = (v: number): number[] => [...le32(v % 2 ** 32), ...le32(Math.floor(v / 2 ** 32))];
const ascii = (s: string, length = s.length): number[] =>
  Array.from({ length }, (_, i) => (i < s.length ? s.charCodeAt(i) : 0));
const chunk = (name: string, body: number[] | Uint8Array): Uint8Array => {
  const bytes = Uint8Array.from(body);
  const out = new Uint8Array(8 + bytes.length + (bytes.length % 2));
  out.set([...ascii(name), ...le32(bytes.length)]);
  out.set(bytes, 8);
  return out;
};
const concat = (parts: Uint8Array[]): Uint8Array => {
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0));
  let o = 0;
  for (const p of parts) {
    out.set(p, o);
    o += p.length;
  }
  return out;
};

/** chna (ITU-R BS.2088): numTracks, numUIDs, then per UID: trackIndex, UID[12], trackRef[14], packRef[11], pad. */
function chnaBody(entries: { track: number; ref: string; pack?: string }[], declaredUids = entries.length): number[] {
  const tracks = new Set(entries.map((e) => e.track)).size;
  return [
    ...le16(tracks),
    ...le16(declaredUids),
    ...entries.flatMap((e, i) => [
      ...le16(e.track),
      ...ascii(`ATU_${String(i + 1).padStart(8, '0')}`, 12),
      ...ascii(e.ref, 14),
      ...ascii(e.pack ?? '', 11),
      0,
    ]),
  ];
}

/** A BW64 file (ITU-R BS.2088; ds64 as EBU Tech 3306): 16-bit PCM, chna before or after the data. */
function bw64(channels: number, samples: Uint8Array, chna: number[], chnaAfterData = false): Uint8Array {
  const frames = samples.length / (2 * channels);
  const fmt = chunk('fmt ', [
    ...le16(1),
    ...le16(channels),
    ...le32(48000),
    ...le32(48000 * 2 * channels),
    ...le16(2 * channels),
    ...le16(16),
  ]);
  const data = chunk('data', samples);
  const chnaChunk = chunk('chna', chna);
  const body = chnaAfterData ? [fmt, data, chnaChunk] : [fmt, chnaChunk, data];
  const ds64 = chunk('ds64', [
    ...le64(4 + 36 + body.reduce((n, p) => n + p.length, 0)),
    ...le64(samples.length),
    ...le64(frames),
    ...le32(0),
  ]);
  return concat([Uint8Array.from([...ascii('BW64'), ...le32(0xffffffff), ...ascii('WAVE')]), ds64, ...body]);
}

const AMPLITUDE = 0.1;
function sinePcm16(channels: number, seconds: number): Uint8Array {
  const parts: Uint8Array[] = [];
  for (const b of toneBlocks({
    sampleRate: 48000,
    channels,
    segments: [{ seconds, frequencyHz: 997, peakDbfs: 20 * Math.log10(AMPLITUDE) }],
  }))
    parts.push(encodePcmFrames([...b.channelData], 16, false));
  return concat(parts);
}

async function loudnessOf(decoded: DecodedAudio): Promise<number | null> {
  const { format } = decoded;
  const meter = new LoudnessMeter({
    sampleRate: format.sampleRate,
    channels: format.channels,
    channelLabels: format.channelLabels,
  });
  for await (const block of decoded.blocks) meter.push(block);
  return meter.result().integratedLufs;
}

async function decodeFile(bytes: Uint8Array, layout?: LayoutName): Promise<DecodedAudio> {
  const path = tmpFile();
  writeFileSync(path, bytes);
  return openAudioFile(path, layout ? { layout } : {});
}

// BS.2094 AP_00010009 (22.2, BS.2051 System H): its channel formats in order, as track formats AT_0001xxxx_01.
const TWENTY_TWO_TWO = [
  0x18, 0x19, 0x03, 0x20, 0x1c, 0x1d, 0x01, 0x02, 0x09, 0x21, 0x0a, 0x0b, 0x22, 0x23, 0x0e, 0x0c, 0x1e, 0x1f, 0x13,
  0x14, 0x11, 0x15, 0x16, 0x17,
];
const trackRef = (index: number) => `AT_0001${index.toString(16).padStart(4, '0')}_01`;

describe('BW64 chna chunk (ITU-R BS.2088 / BS.2076 / BS.2094 common definitions)', () => {
  it('22.2 as the common pack AP_00010009 lists it gives the 22.2 roles and weights', async () => {
    const entries = TWENTY_TWO_TWO.map((index, c) => ({ track: c + 1, ref: trackRef(index), pack: 'AP_00010009' }));
    const decoded = await decodeFile(bw64(24, sinePcm16(24, 1), chnaBody(entries)));
    expect(decoded.format.channelLabels).toEqual([...LAYOUTS['22.2']]);
    expect(decoded.format.layoutFrom).toBe('chna');
    // ITU-R BS.1770-5 eq. (2) with the +0.691 dB K gain at 997 Hz: 10 log10(sum Gi A^2/2).
    const weights = decoded.format.channelLabels.map(channelWeight);
    expect(weights.filter((g) => g === 1.41)).toHaveLength(4); // M+-060 and M+-090
    expect(weights.filter((g) => g === 0)).toHaveLength(2); // LFE1, LFE2
    const expected = 10 * Math.log10((weights.reduce((s, g) => s + g, 0) * AMPLITUDE ** 2) / 2);
    const reading = await loudnessOf(decoded);
    expect(Math.abs((reading ?? 0) - expected)).toBeLessThan(0.01);
    expect(decoded.warnings).toEqual([]);
  });

  it("reads AT_ and AC_..._00 references; custom or missing tracks are 'unknown' with one warning", async () => {
    const entries = [
      { track: 1, ref: 'AT_00010001_01' }, // FrontLeft M+030
      { track: 2, ref: 'AC_00010002_00' }, // FrontRight, channel format referenced directly
      { track: 3, ref: 'AT_00031001_01' }, // an Objects track of the file's own axml
      { track: 2, ref: 'AT_00010003_01' }, // a second UID for track 2: the first one decides
    ];
    const decoded = await decodeFile(bw64(4, new Uint8Array(4 * 2 * 10), chnaBody(entries)));
    expect(decoded.format.channelLabels).toEqual<ChannelLabel[]>(['L', 'R', 'unknown', 'unknown']);
    expect(decoded.warnings.map((w) => [w.code, w.count])).toEqual([['channel_unidentified', 2]]);
    expect(decoded.warnings[0].message).toContain('AT_00031001_01');
  });

  it('finds a chna after the data chunk in a file', async () => {
    const entries = [1, 2, 3, 4, 5, 6].map((index, c) => ({ track: c + 1, ref: trackRef(index) }));
    const decoded = await decodeFile(bw64(6, new Uint8Array(6 * 2 * 10), chnaBody(entries), true));
    expect(decoded.format.channelLabels).toEqual([...LAYOUTS['5.1']]);
  });

  it('a malformed chna never throws: too short, stray track indices, junk references', async () => {
    const short = await decodeFile(bw64(2, new Uint8Array(2 * 2 * 10), [1, 0]));
    expect(short.format.channelLabels).toEqual(['L', 'R']); // no entries: the default order
    expect(short.format.layoutFrom).toBeUndefined();
    const stray = await decodeFile(
      bw64(
        2,
        new Uint8Array(2 * 2 * 10),
        chnaBody([
          { track: 0, ref: trackRef(1) },
          { track: 99, ref: trackRef(2) },
          { track: 1, ref: '\u00ff\u0001garbage' },
          { track: 2, ref: 'AT_0001ZZZZ_01' },
        ]),
      ),
    );
    expect(stray.format.channelLabels).toEqual(['unknown', 'unknown']);
    expect(stray.warnings.map((w) => [w.code, w.count])).toEqual([['channel_unidentified', 2]]);
  });

  it('reads only the entries present when numUIDs claims more (bounded read)', async () => {
    const decoded = await decodeFile(
      bw64(
        2,
        new Uint8Array(2 * 2 * 10),
        chnaBody(
          [
            { track: 1, ref: trackRef(1) },
            { track: 2, ref: trackRef(2) },
          ],
          65535,
        ),
      ),
    );
    expect(decoded.format.channelLabels).toEqual(['L', 'R']);
  });
});

async function plainWav(channels: number, channelMask?: number): Promise<string> {
  const path = tmpFile();
  const silence = Array.from({ length: channels }, () => new Float32Array(4800));
  await writeWavFile(
    path,
    { sampleRate: 48000, channels, bitsPerSample: 16, float: false, ...(channelMask ? { channelMask } : {}) },
    [silence],
  );
  return path;
}

describe('WAVE channel mask bits WAVE does not define (ksmedia.h: SPEAKER_* bits 0-17)', () => {
  it("a channel past the defined bits is 'unknown', with one warning", async () => {
    const decoded = await openAudioFile(await plainWav(4, 0x3 | (1 << 18) | (1 << 20)));
    expect(decoded.format.channelLabels).toEqual<ChannelLabel[]>(['L', 'R', 'unknown', 'unknown']);
    expect(decoded.warnings.map((w) => [w.code, w.count])).toEqual([['channel_unidentified', 2]]);
  });
});

describe('declared layout (file without a channel mask or chna)', () => {
  it('names the channels of an unmasked file', async () => {
    const decoded = await openAudioFile(await plainWav(12), { layout: '7.1.4' });
    expect(decoded.format.channelLabels).toEqual([...LAYOUTS['7.1.4']]);
    expect(decoded.format.layoutFrom).toBe('declared');
  });

  it('a channel count other than the layout is a layout_mismatch error', async () => {
    const failure = await openAudioFile(await plainWav(6), { layout: '7.1' }).catch((e: unknown) => e);
    expect(failure).toBeInstanceOf(EarmarkError);
    expect(failure).toMatchObject({ code: 'layout_mismatch', details: { field: 'layout' } });
    expect(String((failure as Error).message)).toContain('7.1 has 8 channels, the file has 6');
  });

  it('a file with its own channel mask keeps it, with a warning when the declaration differs', async () => {
    const decoded = await openAudioFile(await plainWav(6, 0x3f), { layout: '2.0' });
    expect(decoded.format.channelLabels).toEqual([...LAYOUTS['5.1']]);
    expect(decoded.format.layoutFrom).toBe('channel_mask');
    expect(decoded.warnings.map((w) => w.code)).toEqual(['declared_layout_unused']);
  });

  it('the CLI takes --layout and refuses names it does not know', async () => {
    const out: string[] = [];
    const err: string[] = [];
    const io = { stdout: (t: string) => void out.push(t), stderr: (t: string) => void err.push(t) };
    const path = await plainWav(16);
    expect(await main(['analyze', path, '--layout', '9.1.6', '--json'], io)).toBe(0);
    expect(JSON.parse(out.join('')).format.channelLabels).toEqual([...LAYOUTS['9.1.6']]);
    expect(await main(['analyze', path, '--layout', '7.1'], io)).toBe(3);
    expect(err.join('')).toContain('error layout_mismatch');
    expect(await main(['analyze', path, '--layout', 'quad'], io)).toBe(3);
    expect(err.join('')).toContain('error invalid_argument: --layout must be one of');
  });

  it('a profile may declare it; the schema knows the names', () => {
    const base = {
      id: 'layout-test',
      name: 'Layout test',
      version: '1.0.0',
      description: 'declares a layout',
      basis: 'house rule',
      rules: [{ id: 'loudness', type: 'integrated-loudness', severity: 'fail', targetLufs: -23, toleranceLu: 1 }],
    };
    expect(parseProfile({ ...base, layout: '22.2' }).layout).toBe('22.2');
    expect(() => parseProfile({ ...base, layout: '6.1' })).toThrow(EarmarkError);
  });
});
