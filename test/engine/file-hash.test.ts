// The file's SHA-256 comes from the bytes the decoder reads (no second read of the file) and
// equals `sha256sum` of the whole file for every container: with bytes after the audio, cut short,
// with an MP4 index after the audio, and whatever order the spans arrive in.
import { execFileSync } from 'node:child_process';
import { appendFileSync, mkdtempSync, readFileSync, rmSync, statSync, truncateSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { FileHash, GAP_FILL_MAX_BYTES } from '../../src/decode/file-hash.ts';
import { DECODERS, openAudioFile, type Container } from '../../src/decode/index.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { hasTool } from '../helpers/tools.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-file-hash-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const hasFfmpeg = hasTool('ffmpeg');

const sha256sum = (path: string): string => execFileSync('sha256sum', [path]).toString().split(' ')[0];

/** One ffmpeg recipe per registry entry: file name, encoder, muxer arguments. */
const SAMPLES: Record<Container, [string, string, string[]]> = {
  wav: ['x.wav', 'pcm_s16le', []],
  rf64: ['x-rf64.wav', 'pcm_s24le', ['-rf64', 'always']],
  bw64: ['x-bw64.wav', 'pcm_s24le', ['-rf64', 'always']],
  aiff: ['x.aiff', 'pcm_s16be', []],
  aifc: ['x.aifc', 'pcm_s16le', []],
  flac: ['x.flac', 'flac', []],
  ogg: ['x.ogg', 'libvorbis', []],
  webm: ['x.webm', 'libopus', []],
  caf: ['x.caf', 'pcm_s16le', []],
  m4a: ['x.m4a', 'aac', []], // ffmpeg writes the index (moov) after the audio unless told otherwise
  aac: ['x.aac', 'aac', ['-f', 'adts']],
  mp3: ['x.mp3', 'libmp3lame', ['-write_id3v2', '1', '-metadata', 'title=hash']],
};

/** `seconds` of stereo noise at 48 kHz through ffmpeg; enough bytes for several reads of the PCM reader. */
function make(name: string, encoder: string, args: string[], seconds = 12): string {
  const path = join(dir, name);
  execFileSync('ffmpeg', [
    '-v',
    'error',
    '-y',
    '-f',
    'lavfi',
    '-i',
    `anoisesrc=color=pink:sample_rate=48000:amplitude=0.3:seed=7:duration=${seconds}`,
    '-ac',
    '2',
    '-c:a',
    encoder,
    ...args,
    path,
  ]);
  if (name.includes('bw64')) {
    const bytes = readFileSync(path);
    bytes.write('BW64', 0, 'latin1');
    writeFileSync(path, bytes);
  }
  return path;
}

/** Share of the file the decoder's own reads hashed, by the last decodeDigest. */
let decodedShare = 0;

/** The decode's digest: every block read, then FileHash fills in what the decoder did not read. */
async function decodeDigest(path: string): Promise<string | null> {
  const fileHash = new FileHash(path);
  const decoded = await openAudioFile(path, { onBytes: fileHash.onBytes });
  for await (const _ of decoded.blocks);
  decodedShare = fileHash.hashedLength / statSync(path).size;
  return fileHash.digest();
}

describe.skipIf(!hasFfmpeg)('file hash from the decoded bytes', () => {
  const containers = Object.keys(SAMPLES).filter((c): c is Container => Object.hasOwn(DECODERS, c));

  it('has a sample for every registry entry', () => {
    expect(Object.keys(DECODERS).sort()).toEqual(containers.sort());
  });

  for (const container of containers) {
    it(`${container}: equals sha256sum, also with bytes after the audio and cut short`, async () => {
      const [name, encoder, args] = SAMPLES[container];
      const path = make(name, encoder, args);
      expect(await decodeDigest(path)).toBe(sha256sum(path));
      // No second read: all but an index after the audio came from the decoder's reads.
      expect(decodedShare).toBeGreaterThan(0.97);

      const trailing = join(dir, `trailing-${name}`);
      writeFileSync(trailing, readFileSync(path));
      // MP3 decoders stop on bytes that are not frames; its usual trailer is an ID3v1 tag (128 bytes).
      const tail = container === 'mp3' ? Buffer.from(`TAG${' '.repeat(125)}`, 'latin1') : Buffer.alloc(70_001, 0x5a);
      appendFileSync(trailing, tail);
      expect(await decodeDigest(trailing)).toBe(sha256sum(trailing));

      const cut = join(dir, `cut-${name}`);
      const bytes = readFileSync(path);
      writeFileSync(cut, bytes.subarray(0, Math.floor(bytes.length * 0.6)));
      // Cut short, the audio decodes up to the cut; an MP4 whose index came after the audio has
      // lost it and is refused (the index-first copy below is cut instead).
      if (container === 'm4a') await expect(decodeDigest(cut)).rejects.toThrow();
      else expect(await decodeDigest(cut)).toBe(sha256sum(cut));
    }, 60_000);
  }

  it('m4a with the index first (faststart), whole and cut short', async () => {
    const path = make('first.m4a', 'aac', ['-movflags', '+faststart']);
    expect(await decodeDigest(path)).toBe(sha256sum(path));
    expect(decodedShare).toBe(1);
    const cut = join(dir, 'cut-first.m4a');
    const bytes = readFileSync(path);
    writeFileSync(cut, bytes.subarray(0, Math.floor(bytes.length * 0.6)));
    expect(await decodeDigest(cut)).toBe(sha256sum(cut));
  }, 60_000);

  it('wav with a chunk after more audio than the gap the hash fills on the spot', async () => {
    // The header scan skips the audio to look at the chunk after it; the audio reader comes back.
    const path = make('long.wav', 'pcm_s24le', [], 70);
    appendFileSync(path, Buffer.from('LIST\x04\x00\x00\x00INFO', 'latin1'));
    expect(readFileSync(path).length).toBeGreaterThan(GAP_FILL_MAX_BYTES * 2);
    expect(await decodeDigest(path)).toBe(sha256sum(path));
    expect(decodedShare).toBeGreaterThan(0.99);
  }, 60_000);

  it('analyzeFile reports sha256sum; a known hash is reported as given; hash: false leaves it out', async () => {
    const path = make('analyse.wav', 'pcm_s24le', [], 20);
    appendFileSync(path, Buffer.alloc(1234, 1));
    expect((await analyzeFile(path)).file?.sha256).toBe(sha256sum(path));
    expect((await analyzeFile(path, { threads: 2 })).file?.sha256).toBe(sha256sum(path));
    const known = 'a'.repeat(64);
    expect((await analyzeFile(path, { knownSha256: known })).file?.sha256).toBe(known);
    expect((await analyzeFile(path, { hash: false })).file?.sha256).toBeUndefined();

    const cut = join(dir, 'analyse-cut.wav');
    writeFileSync(cut, readFileSync(path));
    truncateSync(cut, 1_000_001);
    const document = await analyzeFile(cut);
    expect(document.file?.sha256).toBe(sha256sum(cut));
  }, 120_000);
});

describe('FileHash', () => {
  const path = join(dir, 'bytes.bin');
  const bytes = new Uint8Array(3 * GAP_FILL_MAX_BYTES).map((_, i) => (i * 7919) % 251);
  writeFileSync(path, bytes);
  const expected = sha256sum(path);
  const span = (from: number, to: number) => bytes.subarray(from, to);

  it('in order, overlapping, repeated, with short gaps, far ahead, and with nothing read', async () => {
    const orders: [number, number][][] = [
      [[0, bytes.length]],
      [
        [0, 1000],
        [500, 5000],
        [0, 100],
        [5000, 9000],
      ],
      [
        [100, 200],
        [GAP_FILL_MAX_BYTES, GAP_FILL_MAX_BYTES + 10],
      ],
      [
        [0, 10],
        [2 * GAP_FILL_MAX_BYTES + 20, 2 * GAP_FILL_MAX_BYTES + 40],
        [10, 2 * GAP_FILL_MAX_BYTES],
      ],
      [],
    ];
    for (const order of orders) {
      const fileHash = new FileHash(path);
      for (const [from, to] of order) fileHash.onBytes(from, span(from, to));
      expect(await fileHash.digest()).toBe(expected);
    }
  });

  it('is null when the file ends before a span the decoder read (it changed while read)', async () => {
    const fileHash = new FileHash(path);
    fileHash.onBytes(0, span(0, bytes.length - 5));
    fileHash.onBytes(bytes.length + 10, new Uint8Array(4));
    expect(await fileHash.digest()).toBeNull();
  });
});
