// The markers copy in bounded memory whatever the file's size, and typed errors (never a crash or
// a hang) for damaged marker chunks and damaged files.
import { createWriteStream, readFileSync, writeFileSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { join } from 'node:path';
import { Readable, Writable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { afterAll, describe, expect, it } from 'vitest';
import { readCueMarkers } from '../../src/decode/cue.ts';
import { wavHeader } from '../../src/encode/wav.ts';
import { planMarkedWav } from '../../src/exports/cue-wav.ts';
import type { Flag } from '../../src/profiles/index.ts';
import { tempDir } from '../profiles/helpers.ts';
import { sampleFlags } from '../views/sample-report.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

/** A WAV whose data is a hole in the file (zeros, no disk): a large file cheaply. */
async function sparseWav(path: string, frames: number, rf64 = false): Promise<void> {
  const header = wavHeader({ sampleRate: 48_000, channels: 2, bitsPerSample: 24, float: false, frames, rf64 });
  const handle = await open(path, 'w');
  await handle.write(header, 0, header.length, 0);
  await handle.truncate(header.length + frames * 6);
  await handle.close();
}

const flag = (number: number, startSample: number): Flag => ({
  ...sampleFlags[0],
  number,
  startSample,
  endSample: startSample + 480,
});

describe('markers copy limits', () => {
  it('streams a 1 GiB RF64 file with heap and buffers growing by far less than the file', async () => {
    const path = join(dir, 'long.wav');
    const frames = Math.floor(2 ** 30 / 6);
    await sparseWav(path, frames, true);
    const plan = await planMarkedWav(path, [flag(1, 48_000), flag(2, frames - 10)]);
    const used = () => process.memoryUsage().heapUsed + process.memoryUsage().arrayBuffers;
    const before = used();
    let peak = 0;
    let bytes = 0;
    await pipeline(
      Readable.from(plan.chunks()),
      new Writable({
        write(chunk: Buffer, _encoding, done) {
          bytes += chunk.length;
          peak = Math.max(peak, used() - before);
          done();
        },
      }),
    );
    expect(bytes).toBe(plan.sizeBytes);
    expect(peak).toBeLessThan(96 * 1024 * 1024);
  }, 120_000);

  it('damaged cue and adtl chunks are corrupt_file, never a crash', async () => {
    const base = readFileSync(
      await (async () => {
        const p = join(dir, 'small.wav');
        await sparseWav(p, 4800);
        return p;
      })(),
    );
    const withChunk = (id: string, body: Buffer) => {
      const head = Buffer.alloc(8);
      head.write(id, 0, 'latin1');
      head.writeUInt32LE(body.length, 4);
      const b = Buffer.concat([base, head, body, Buffer.alloc(body.length % 2)]);
      b.writeUInt32LE(b.length - 8, 4);
      const path = join(dir, `damaged-${id.trim()}-${body.length}.wav`);
      writeFileSync(path, b);
      return path;
    };
    // A cue chunk that claims a million points in 8 bytes.
    const many = Buffer.alloc(8);
    many.writeUInt32LE(1_000_000, 0);
    await expect(readCueMarkers(withChunk('cue ', many))).rejects.toMatchObject({ code: 'corrupt_file' });
    // An adtl sub-chunk whose size runs past its list.
    const cue = Buffer.alloc(28);
    cue.writeUInt32LE(1, 0);
    cue.writeUInt32LE(1, 4);
    const adtl = Buffer.concat([Buffer.from('adtllabl'), Buffer.from([0xff, 0xff, 0, 0, 1, 0, 0, 0])]);
    const path = withChunk('cue ', cue);
    const b = readFileSync(path);
    const list = Buffer.concat([Buffer.from('LIST'), Buffer.alloc(4), adtl]);
    list.writeUInt32LE(adtl.length, 4);
    const both = Buffer.concat([b, list]);
    both.writeUInt32LE(both.length - 8, 4);
    writeFileSync(path, both);
    await expect(readCueMarkers(path)).rejects.toMatchObject({ code: 'corrupt_file' });
    // Not RIFF at all.
    writeFileSync(join(dir, 'text.wav'), 'hello, this is not audio');
    await expect(readCueMarkers(join(dir, 'text.wav'))).rejects.toMatchObject({ code: 'unsupported_format' });
    await expect(planMarkedWav(join(dir, 'text.wav'), [])).rejects.toMatchObject({ code: 'markers_need_wave' });
  });

  it('a file cut short inside its audio gets a copy whose sizes say what is there', async () => {
    const full = join(dir, 'full.wav');
    await sparseWav(full, 48_000);
    const cut = join(dir, 'cut.wav');
    const bytes = readFileSync(full);
    writeFileSync(cut, bytes.subarray(0, bytes.length - 1001)); // odd: ends mid-frame
    const plan = await planMarkedWav(cut, [flag(1, 100), flag(2, 47_999)]);
    expect(plan.markers).toBe(1); // the second starts past the audio that is there
    const out = join(dir, 'cut-marked.wav');
    await pipeline(Readable.from(plan.chunks()), createWriteStream(out));
    const b = readFileSync(out);
    expect(b.readUInt32LE(4)).toBe(b.length - 8);
    expect(b.length % 2).toBe(0);
    expect((await readCueMarkers(out)).map((m) => m.sampleOffset)).toEqual([100]);
  });
});
