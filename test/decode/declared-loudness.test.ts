// Declared loudness in WAVE metadata: the BWF bext version 2 loudness fields and the iXML
// LOUDNESS block. Files are built here byte by byte (not with the project's encoder), except the
// round trip through src/encode/wav.ts; ffmpeg is the outside writer of real bext chunks.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { parseBextLoudness, parseIxmlLoudness } from '../../src/decode/declared-loudness.ts';
import { openAudioFile, openPcmStream, type DecodedAudio } from '../../src/decode/index.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { hasTool } from '../helpers/tools.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-declared-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
let fileCounter = 0;
const tmpFile = (): string => join(dir, `d${fileCounter++}.wav`);

// ---- independent byte builders ----
const le16 = (v: number): number[] => [v & 0xff, (v >> 8) & 0xff];
const le32 = (v: number): number[] => [v & 0xff, (v >>> 8) & 0xff, (v >>> 16) & 0xff, (v >>> 24) & 0xff];
const le64 = (v: number): number[] => [...le32(v % 2 ** 32), ...le32(Math.floor(v / 2 ** 32))];
const id = (s: string): number[] => [...s].map((c) => c.charCodeAt(0));
const chunk = (name: string, body: number[], size = body.length): number[] => [
  ...id(name),
  ...le32(size),
  ...body,
  ...(body.length % 2 ? [0] : []),
];
/** WAVEFORMATEX (mmreg.h): PCM, mono, 48 kHz, 16-bit. */
const FMT = chunk('fmt ', [...le16(1), ...le16(1), ...le32(48000), ...le32(96000), ...le16(2), ...le16(16)]);
const DATA = chunk('data', [...le16(1000), ...le16(-1000), ...le16(500), ...le16(0)]);

/**
 * A bext body laid out field by field as EBU Tech 3285 v2 lists them: Description (256 bytes),
 * Originator (32), OriginatorReference (32), OriginationDate (10), OriginationTime (8),
 * TimeReferenceLow/High (4 + 4), Version (2), UMID (64), LoudnessValue, LoudnessRange,
 * MaxTruePeakLevel, MaxMomentaryLoudness, MaxShortTermLoudness (2 each, signed, value x 100),
 * Reserved (180), then CodingHistory. The offsets below come from adding those sizes up.
 */
function bextBody(version: number, loudness: number[], timeReference = 0): number[] {
  const body: number[] = new Array(602).fill(0);
  body.splice(0, 11, ...id('declared 1k')); // Description, text only
  body.splice(338, 8, ...le64(timeReference));
  body.splice(346, 2, ...le16(version));
  for (let i = 0; i < 64; i++) body[348 + i] = 0xa5; // UMID bytes must not leak into the loudness fields
  loudness.forEach((v, i) => body.splice(412 + 2 * i, 2, ...le16(v & 0xffff)));
  return [...body, ...id('A=PCM,F=48000,W=16,M=mono\r\n')];
}

function riffBytes(chunks: number[][]): Uint8Array {
  const body = chunks.flat();
  return new Uint8Array([...id('RIFF'), ...le32(body.length + 4), ...id('WAVE'), ...body]);
}

/** RF64 or BW64 (EBU Tech 3306 / ITU-R BS.2088): ds64 with the data size, 32-bit sizes set to -1. */
function rf64Bytes(form: 'RF64' | 'BW64', chunks: number[][]): Uint8Array {
  const dataBytes = 8;
  const ds64 = chunk('ds64', [...le64(0), ...le64(dataBytes), ...le64(4), ...le32(0)]);
  const body = [...ds64, ...chunks.flat()];
  return new Uint8Array([...id(form), ...le32(0xffffffff), ...id('WAVE'), ...body]);
}

async function decodeAll(bytes: Uint8Array): Promise<DecodedAudio> {
  const path = tmpFile();
  writeFileSync(path, bytes);
  const decoded = await openAudioFile(path);
  for await (const _ of decoded.blocks) {
    // warnings are final after the blocks
  }
  return decoded;
}

const LOUDNESS = [-2300, 750, -110, -1800, -2050];
const EXPECTED = {
  source: 'bext',
  integratedLufs: -23,
  loudnessRangeLu: 7.5,
  maxTruePeakDbtp: -1.1,
  maxMomentaryLufs: -18,
  maxShortTermLufs: -20.5,
};

describe('bext version 2 loudness fields (EBU Tech 3285 v2: int16 LE at 412..420, value x 100)', () => {
  it('reads each of the five fields at its own offset, before the data', async () => {
    const decoded = await decodeAll(riffBytes([FMT, chunk('bext', bextBody(2, LOUDNESS, 48000 * 3600)), DATA]));
    expect(decoded.format.declaredLoudness).toEqual([EXPECTED]);
    expect(decoded.format.timeReferenceSamples).toBe(48000 * 3600);
    expect(decoded.warnings).toEqual([]);
  });

  it('reads them after the data too (a seekable file), and iXML after that', async () => {
    const ixml = chunk('iXML', id('<BWFXML><LOUDNESS><LOUDNESS_VALUE>-22.5</LOUDNESS_VALUE></LOUDNESS></BWFXML>'));
    const decoded = await decodeAll(riffBytes([FMT, DATA, chunk('bext', bextBody(2, LOUDNESS)), ixml]));
    expect(decoded.format.declaredLoudness?.map((d) => [d.source, d.integratedLufs])).toEqual([
      ['bext', -23],
      ['ixml', -22.5],
    ]);
  });

  it('0x7FFF is "not set": that field is null; all five not set declare nothing', async () => {
    const some = await decodeAll(
      riffBytes([FMT, chunk('bext', bextBody(2, [-2300, 0x7fff, 0x7fff, -1800, 0x7fff])), DATA]),
    );
    expect(some.format.declaredLoudness).toEqual([
      { ...EXPECTED, loudnessRangeLu: null, maxTruePeakDbtp: null, maxShortTermLufs: null },
    ]);
    const none = await decodeAll(riffBytes([FMT, chunk('bext', bextBody(2, new Array(5).fill(0x7fff))), DATA]));
    expect(none.format.declaredLoudness).toEqual([]);
    expect(none.warnings).toEqual([]);
  });

  it('versions 0 and 1 have no loudness fields: the bytes there are not read', async () => {
    for (const version of [0, 1]) {
      const decoded = await decodeAll(riffBytes([FMT, chunk('bext', bextBody(version, LOUDNESS, 17)), DATA]));
      expect(decoded.format.declaredLoudness).toEqual([]);
      expect(decoded.format.timeReferenceSamples).toBe(17);
      expect(decoded.warnings).toEqual([]);
    }
  });

  it('a chunk too short for its loudness fields is a warning, the time reference still read', async () => {
    const short = bextBody(2, LOUDNESS, 99).slice(0, 400);
    const decoded = await decodeAll(riffBytes([FMT, chunk('bext', short), DATA]));
    expect(decoded.format.declaredLoudness).toEqual([]);
    expect(decoded.format.timeReferenceSamples).toBe(99);
    expect(decoded.warnings.map((w) => w.code)).toEqual(['unreadable_metadata']);
    expect(decoded.warnings[0].message).toMatch(/version 2 .*400 bytes.*412-421/);
    const tiny = await decodeAll(riffBytes([FMT, chunk('bext', [1, 2, 3, 4]), DATA]));
    expect(tiny.warnings.map((w) => w.message)).toEqual([expect.stringMatching(/4 bytes, too short/)]);
    expect(tiny.format.timeReferenceSamples).toBeNull();
  });

  it('a file that ends inside a bext chunk after the data: a warning, the audio intact', async () => {
    const cut = chunk('bext', bextBody(2, LOUDNESS)).slice(0, 8 + 380);
    const decoded = await decodeAll(riffBytes([FMT, DATA, cut]));
    expect(decoded.framesDecoded).toBe(4);
    expect(decoded.format.declaredLoudness).toEqual([]);
    expect(decoded.warnings.map((w) => w.message)).toEqual([expect.stringMatching(/ends after 380/)]);
  });

  it('RF64 and BW64 (EBU Tech 3306, ITU-R BS.2088) carry bext the same way', async () => {
    for (const form of ['RF64', 'BW64'] as const) {
      const decoded = await decodeAll(rf64Bytes(form, [FMT, chunk('bext', bextBody(2, LOUDNESS)), DATA]));
      expect(decoded.format.container).toBe(form.toLowerCase());
      expect(decoded.format.declaredLoudness).toEqual([EXPECTED]);
    }
  });

  it('a stream reads the metadata before the data', async () => {
    const bytes = riffBytes([FMT, chunk('bext', bextBody(2, LOUDNESS)), DATA]);
    async function* once() {
      yield bytes;
    }
    const decoded = await openPcmStream(once());
    expect(decoded.format.declaredLoudness).toEqual([EXPECTED]);
  });

  it('the project encoder writes what the reader reads (round trip, RF64 too)', async () => {
    for (const rf64 of [false, true]) {
      const path = tmpFile();
      await writeWavFile(
        path,
        {
          sampleRate: 48000,
          channels: 1,
          bitsPerSample: 16,
          float: false,
          rf64,
          bextLoudness: { integratedLufs: -23, loudnessRangeLu: 7.5, maxTruePeakDbtp: -1.1, maxShortTermLufs: -20.5 },
        },
        [[new Float32Array(100)]],
      );
      const bytes = readFileSync(path);
      const at = bytes.indexOf('bext') + 8;
      expect(bytes.readUInt16LE(at + 346)).toBe(2); // Version
      expect(bytes.readInt16LE(at + 412)).toBe(-2300); // LoudnessValue
      expect(bytes.readInt16LE(at + 418)).toBe(0x7fff); // MaxMomentaryLoudness not set
      const decoded = await openAudioFile(path);
      expect(decoded.format.declaredLoudness).toEqual([{ ...EXPECTED, maxMomentaryLufs: null }]);
    }
  });

  it.runIf(hasTool('ffmpeg'))(
    "ffmpeg's bext (-write_bext 1) is version 1: no loudness fields, so nothing declared and no warning",
    async () => {
      // ffmpeg 5.1's wav muxer writes Version 1 and zeros where version 2 keeps loudness; it has no
      // metadata key for those fields, so it cannot serve as an outside writer of them.
      const path = tmpFile();
      execFileSync('/usr/bin/ffmpeg', [
        ...['-v', 'error', '-f', 'lavfi', '-i', 'anullsrc=r=48000:cl=mono', '-t', '0.05'],
        ...['-c:a', 'pcm_s16le', '-write_bext', '1', '-metadata', 'time_reference=1728000000', path],
      ]);
      const bytes = readFileSync(path);
      const at = bytes.indexOf('bext') + 8;
      expect(bytes.readUInt16LE(at + 346)).toBe(1);
      expect([0, 1, 2, 3, 4].map((i) => bytes.readInt16LE(at + 412 + 2 * i))).toEqual([0, 0, 0, 0, 0]);
      const decoded = await decodeAll(bytes);
      expect(decoded.format.timeReferenceSamples).toBe(1_728_000_000);
      expect(decoded.format.declaredLoudness).toEqual([]);
      expect(decoded.warnings).toEqual([]);
    },
  );
});

describe('bext parser on its own', () => {
  it('reads signed hundredths (-32768 and +32766 are values; 0x7FFF is not)', () => {
    const body = new Uint8Array(bextBody(2, [-32768, 32766, 0, 1, -1]).slice(0, 422));
    expect(parseBextLoudness(body, 602).declared).toEqual({
      source: 'bext',
      integratedLufs: -327.68,
      loudnessRangeLu: 327.66,
      maxTruePeakDbtp: 0,
      maxMomentaryLufs: 0.01,
      maxShortTermLufs: -0.01,
    });
  });
});

describe('iXML LOUDNESS block (element names from memory, not checked against the iXML specification)', () => {
  const ixml = (inner: string) =>
    new TextEncoder().encode(`<?xml version="1.0" encoding="UTF-8"?><BWFXML>${inner}</BWFXML>`);
  const block = `<LOUDNESS>
    <LOUDNESS_VALUE>-23.00</LOUDNESS_VALUE>
    <LOUDNESS_RANGE> 6.5 </LOUDNESS_RANGE>
    <MAX_TRUE_PEAK_LEVEL>-1.0</MAX_TRUE_PEAK_LEVEL>
    <MAX_MOMENTARY_LOUDNESS>-15.2</MAX_MOMENTARY_LOUDNESS>
    <MAX_SHORT_TERM_LOUDNESS>-19.75</MAX_SHORT_TERM_LOUDNESS>
  </LOUDNESS>`;
  const full = {
    source: 'ixml',
    integratedLufs: -23,
    loudnessRangeLu: 6.5,
    maxTruePeakDbtp: -1,
    maxMomentaryLufs: -15.2,
    maxShortTermLufs: -19.75,
  };

  it('reads the five elements', () => {
    expect(parseIxmlLoudness(ixml(block))).toEqual({ declared: full, warnings: [] });
  });

  it('takes the short spellings MAX_MOMENTARY and MAX_SHORT_TERM, a unit after the number, and empty elements as unset', () => {
    const reading = parseIxmlLoudness(
      ixml(
        '<LOUDNESS><LOUDNESS_VALUE>-24.1 LUFS</LOUDNESS_VALUE><LOUDNESS_RANGE/><MAX_TRUE_PEAK_LEVEL></MAX_TRUE_PEAK_LEVEL><MAX_MOMENTARY>-19.5</MAX_MOMENTARY><MAX_SHORT_TERM>-23.00</MAX_SHORT_TERM></LOUDNESS>',
      ),
    );
    expect(reading.declared).toEqual({
      source: 'ixml',
      integratedLufs: -24.1,
      loudnessRangeLu: null,
      maxTruePeakDbtp: null,
      maxMomentaryLufs: -19.5,
      maxShortTermLufs: -23,
    });
  });

  it('ignores elements outside a LOUDNESS block and a commented-out block', () => {
    expect(parseIxmlLoudness(ixml('<LOUDNESS_VALUE>-23</LOUDNESS_VALUE>')).declared).toBeNull();
    expect(parseIxmlLoudness(ixml(`<!-- ${block} -->`)).declared).toBeNull();
    expect(parseIxmlLoudness(ixml('<NOTE>no loudness here</NOTE>'))).toEqual({ declared: null, warnings: [] });
  });

  it('a value that is not a number is a warning and stays unset; nothing is evaluated', () => {
    const reading = parseIxmlLoudness(
      ixml(
        '<LOUDNESS><LOUDNESS_VALUE>-23;alert(1)</LOUDNESS_VALUE><LOUDNESS_RANGE>1e400</LOUDNESS_RANGE><MAX_TRUE_PEAK_LEVEL>-1</MAX_TRUE_PEAK_LEVEL></LOUDNESS>',
      ),
    );
    expect(reading.declared).toMatchObject({ integratedLufs: null, loudnessRangeLu: null, maxTruePeakDbtp: -1 });
    expect(reading.warnings.map((w) => w.code)).toEqual(['unreadable_metadata', 'unreadable_metadata']);
  });

  it('reads UTF-16 text with a byte-order mark ("any unicode encoding", iXML)', () => {
    const text = `<BWFXML>${block}</BWFXML>`;
    const le = new Uint8Array(2 + text.length * 2);
    le.set([0xff, 0xfe]);
    for (let i = 0; i < text.length; i++) le[2 + 2 * i] = text.charCodeAt(i);
    expect(parseIxmlLoudness(le).declared).toEqual(full);
  });

  it('an iXML chunk over 1 MiB is not read: a warning, the audio intact', async () => {
    const big = new Array(1024 * 1024 + 2).fill(0x20);
    big.splice(0, 60, ...id('<BWFXML><LOUDNESS><LOUDNESS_VALUE>-23</LOUDNESS_VALUE></LOUDNESS>'.padEnd(60)));
    const decoded = await decodeAll(riffBytes([FMT, chunk('iXML', big), DATA]));
    expect(decoded.framesDecoded).toBe(4);
    expect(decoded.format.declaredLoudness).toEqual([]);
    expect(decoded.warnings.map((w) => w.message)).toEqual([expect.stringMatching(/larger than the 1048576 bytes/)]);
  });

  it('the project encoder writes an iXML chunk the reader reads', async () => {
    const path = tmpFile();
    await writeWavFile(
      path,
      { sampleRate: 48000, channels: 1, bitsPerSample: 16, float: false, ixml: `<BWFXML>${block}</BWFXML>` },
      [[new Float32Array(10)]],
    );
    expect((await openAudioFile(path)).format.declaredLoudness).toEqual([full]);
  });
});

describe('metadata parsers on arbitrary bytes', () => {
  it('never throw, and only ever return finite figures or null', () => {
    let seed = 12345;
    const next = () => {
      seed = (seed * 1103515245 + 12345) % 2 ** 31; // a fixed LCG: the same bytes every run
      return seed / 2 ** 31;
    };
    const pieces = ['<LOUDNESS>', '</LOUDNESS>', '<LOUDNESS_VALUE>', '</LOUDNESS_VALUE>', '<!--', '-->', '-23.5', '<'];
    for (let n = 0; n < 500; n++) {
      const bytes = new Uint8Array(Math.floor(next() * 700)).map(() => Math.floor(next() * 256));
      const text = Array.from({ length: 20 }, () => pieces[Math.floor(next() * pieces.length)]).join('');
      for (const reading of [
        parseBextLoudness(bytes, bytes.length),
        parseIxmlLoudness(bytes),
        parseIxmlLoudness(new TextEncoder().encode(text)),
      ]) {
        const values = reading.declared ? Object.values(reading.declared).slice(1) : [];
        for (const v of values) expect(v === null || Number.isFinite(v)).toBe(true);
      }
    }
  });
});
