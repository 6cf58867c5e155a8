// Markers export: a WAVE copy with a cue point per flag, read back by our reader and by Debian's
// ffprobe, with the audio data byte-identical to the source.
import { execFileSync } from 'node:child_process';
import { createWriteStream, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readCueMarkers } from '../../src/decode/cue.ts';
import { readRiffLayout } from '../../src/decode/riff-chunks.ts';
import { writeAiffFile } from '../../src/encode/wav.ts';
import { planMarkedWav } from '../../src/exports/cue-wav.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { builtinProfile, type Flag, type QcReport } from '../../src/profiles/index.ts';
import { checkFile, SAMPLE_RATE, setRange, tempDir, writeTone } from '../profiles/helpers.ts';
import { hasTool } from '../helpers/tools.ts';
import { open } from 'node:fs/promises';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

async function writeMarked(source: string, flags: readonly Flag[], name: string): Promise<string> {
  const out = join(dir, name);
  const plan = await planMarkedWav(source, flags);
  await pipeline(Readable.from(plan.chunks()), createWriteStream(out));
  expect(readFileSync(out).length).toBe(plan.sizeBytes);
  return out;
}

/** The data chunk's bytes of a WAVE-family file. */
async function dataBytes(path: string): Promise<Buffer> {
  const handle = await open(path, 'r');
  try {
    const { chunks } = await readRiffLayout(handle, (await handle.stat()).size);
    const data = chunks.find((c) => c.id === 'data');
    if (!data) throw new Error('no data chunk');
    return readFileSync(path).subarray(data.bodyOffset, data.bodyOffset + data.sizeBytes);
  } finally {
    await handle.close();
  }
}

/** RIFF size = file size - 8 and every chunk inside, word-aligned (RIFF: sizes exclude the pad byte). */
function expectWellFormed(path: string) {
  const b = readFileSync(path);
  const id = b.toString('latin1', 0, 4);
  if (id === 'RIFF') expect(b.readUInt32LE(4)).toBe(b.length - 8);
  else {
    expect(b.readUInt32LE(4)).toBe(0xffffffff);
    expect(b.toString('latin1', 12, 16)).toBe('ds64');
    expect(Number(b.readBigUInt64LE(20))).toBe(b.length - 8); // EBU Tech 3306: ds64 riffSize
  }
  let o = 12;
  while (o < b.length) {
    expect(o % 2).toBe(0);
    let size = b.readUInt32LE(o + 4);
    if (size === 0xffffffff) size = Number(b.readBigUInt64LE(28)); // ds64 dataSize
    o += 8 + size + (size % 2);
  }
  expect(o).toBe(b.length);
}

let source = '';
let report: QcReport;
beforeAll(async () => {
  // 6 s at -23 dBFS with a flat clip at 2 s and a drop-out to zero at 4 s.
  source = await writeTone(dir, {
    bitsPerSample: 24,
    segments: [{ seconds: 6, peakDbfs: -23 }],
    edit: (data, start) => {
      setRange(96_000, 96_010, 0.99)(data, start);
      setRange(192_000, 192_000 + 4_800, 0)(data, start);
    },
  });
  report = await checkFile(source, builtinProfile('ebu-r128'));
});

describe('markers WAV', () => {
  it('puts one cue point per flag, read back by our reader with label, note and span length', async () => {
    expect(report.flags.length).toBeGreaterThan(0);
    const out = await writeMarked(source, report.flags, 'marked.wav');
    expectWellFormed(out);
    const markers = await readCueMarkers(out);
    expect(markers.map((m) => m.sampleOffset)).toEqual(report.flags.map((f) => f.startSample));
    for (const [i, f] of report.flags.entries()) {
      expect(markers[i].id).toBe(f.number);
      expect(markers[i].label).toBe(`#${f.number} ${f.severity}: ${f.title} (ch ${f.channelName})`);
      expect(markers[i].note).toBe(f.message);
      if (f.endSample > f.startSample) {
        expect(markers[i].lengthFrames).toBe(f.endSample - f.startSample);
        expect(markers[i].purpose).toBe('rgn ');
      }
    }
    expect((await dataBytes(out)).equals(await dataBytes(source))).toBe(true);
    // The copy reads as the same audio: same readings to the bit.
    const [a, b] = await Promise.all([analyzeFile(source), analyzeFile(out)]);
    expect(b.summary).toEqual(a.summary);
  });

  it.runIf(hasTool('ffprobe'))('ffprobe (Debian) lists the cue points as chapters at the flag times', async () => {
    const out = await writeMarked(source, report.flags, 'probe.wav');
    const json = execFileSync('ffprobe', ['-v', 'error', '-show_chapters', '-of', 'json', out], { encoding: 'utf8' });
    const chapters = (JSON.parse(json) as { chapters: Array<{ id: number; start: number; tags?: { title?: string } }> })
      .chapters;
    expect(chapters.map((c) => c.start)).toEqual(report.flags.map((f) => f.startSample)); // time base 1/sample rate
    expect(chapters.map((c) => c.id)).toEqual(report.flags.map((f) => f.number));
    expect(chapters[0].tags?.title).toBe(
      `#1 ${report.flags[0].severity}: ${report.flags[0].title} (ch ${report.flags[0].channelName})`,
    );
  });

  it('replaces existing cue and adtl chunks, keeps other chunks after the audio, pads odd ones', async () => {
    const b = readFileSync(source);
    const chunk = (id: string, body: Buffer) => {
      const head = Buffer.alloc(8);
      head.write(id, 0, 'latin1');
      head.writeUInt32LE(body.length, 4);
      return Buffer.concat([head, body, Buffer.alloc(body.length % 2)]);
    };
    const oldCue = chunk(
      'cue ',
      Buffer.from([1, 0, 0, 0, 9, 0, 0, 0, 0, 0, 0, 0, ...Buffer.from('data'), 0, 0, 0, 0, 0, 0, 0, 0, 5, 0, 0, 0]),
    );
    const oldAdtl = chunk(
      'LIST',
      Buffer.concat([Buffer.from('adtl'), chunk('labl', Buffer.from([9, 0, 0, 0, 0x6f, 0x6c, 0x64, 0]))]),
    );
    const odd = chunk('zzzz', Buffer.from('abc'));
    const withOld = Buffer.concat([b, oldCue, oldAdtl, odd]);
    withOld.writeUInt32LE(withOld.length - 8, 4);
    const path = join(dir, 'with-old-markers.wav');
    writeFileSync(path, withOld);
    expect((await readCueMarkers(path)).map((m) => m.label)).toEqual(['old']);
    const out = await writeMarked(path, report.flags.slice(0, 1), 'replaced.wav');
    expectWellFormed(out);
    expect((await readCueMarkers(out)).map((m) => m.id)).toEqual([1]);
    expect(readFileSync(out).subarray(-12).equals(odd)).toBe(true);
    expect((await dataBytes(out)).equals(await dataBytes(source))).toBe(true);
  });

  it('RF64: the ds64 riffSize covers the new file and the audio is unchanged', async () => {
    const { writeWavFile } = await import('../../src/encode/wav.ts');
    const rf64 = join(dir, 'source-rf64.wav');
    const tone = new Float32Array(SAMPLE_RATE).map((_, i) => 0.1 * Math.sin((2 * Math.PI * 1000 * i) / SAMPLE_RATE));
    await writeWavFile(rf64, { sampleRate: SAMPLE_RATE, channels: 1, bitsPerSample: 16, float: false, rf64: true }, [
      [tone],
    ]);
    const flags = report.flags.slice(0, 1).map((f) => ({ ...f, startSample: 1000, endSample: 3000 }));
    const out = await writeMarked(rf64, flags, 'marked-rf64.wav');
    expectWellFormed(out);
    expect(await readCueMarkers(out)).toMatchObject([{ id: 1, sampleOffset: 1000, lengthFrames: 2000 }]);
    expect((await dataBytes(out)).equals(await dataBytes(rf64))).toBe(true);
    if (hasTool('ffprobe')) {
      const json = execFileSync('ffprobe', ['-v', 'error', '-show_chapters', '-of', 'json', out], { encoding: 'utf8' });
      expect((JSON.parse(json) as { chapters: Array<{ start: number }> }).chapters.map((c) => c.start)).toEqual([1000]);
    }
  });

  it('a file outside the WAVE family is refused with markers_need_wave', async () => {
    const aiff = join(dir, 'source.aiff');
    await writeAiffFile(aiff, { sampleRate: SAMPLE_RATE, channels: 1, bitsPerSample: 16 }, [[new Float32Array(480)]]);
    await expect(planMarkedWav(aiff, report.flags)).rejects.toMatchObject({ code: 'markers_need_wave' });
  });

  it('flags past the audio get no cue point; labels are cut at a character boundary', async () => {
    const f = report.flags[0];
    const flags = [
      { ...f, number: 1, title: 'é'.repeat(300) },
      { ...f, number: 2, startSample: 10 ** 9, endSample: 10 ** 9 + 5 },
    ];
    const out = await writeMarked(source, flags, 'cut.wav');
    const markers = await readCueMarkers(out);
    expect(markers.map((m) => m.id)).toEqual([1]);
    expect(Buffer.byteLength(markers[0].label ?? '')).toBeLessThanOrEqual(255);
    expect(markers[0].label).not.toContain('\ufffd');
  });
});
