// The decoder registry: every entry names its own files, and its probe reads the same format
// facts from the headers that opening the file reports.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { detectContainer } from '../../src/decode/detect.ts';
import { DECODERS, openAudioFile, type Container } from '../../src/decode/index.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-registry-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const encoders = new Set(
  execFileSync('/usr/bin/ffmpeg', ['-v', 'error', '-encoders'])
    .toString()
    .split('\n')
    .map((l) => l.trim().split(/\s+/)[1]),
);

/** One ffmpeg recipe per registry entry: file name, encoder, muxer arguments. */
const SAMPLES: Record<Container, [string, string, string[]]> = {
  wav: ['x.wav', 'pcm_s16le', []],
  rf64: ['x-rf64.wav', 'pcm_s24le', ['-rf64', 'always']],
  bw64: ['x-bw64.wav', 'pcm_s24le', ['-rf64', 'always']], // RF64 with the BW64 id (ITU-R BS.2088 shares the layout)
  aiff: ['x.aiff', 'pcm_s16be', []],
  aifc: ['x.aifc', 'pcm_s16le', []], // little-endian samples need AIFF-C 'sowt'
  flac: ['x.flac', 'flac', []],
  ogg: ['x.ogg', 'libvorbis', []],
  webm: ['x.webm', 'libopus', []],
  caf: ['x.caf', 'pcm_s16le', []],
  m4a: ['x.m4a', 'aac', []],
  aac: ['x.aac', 'aac', ['-f', 'adts']],
  mp3: ['x.mp3', 'libmp3lame', []],
};

function make(container: Container): string {
  const [name, encoder, args] = SAMPLES[container];
  const path = join(dir, name);
  execFileSync('/usr/bin/ffmpeg', [
    '-v',
    'error',
    '-y',
    '-f',
    'lavfi',
    '-i',
    'sine=frequency=440:sample_rate=48000:duration=0.3',
    '-ac',
    '2',
    '-c:a',
    encoder,
    ...args,
    path,
  ]);
  if (container === 'bw64') {
    const bytes = readFileSync(path);
    bytes.write('BW64', 0, 'latin1');
    writeFileSync(path, bytes);
  }
  return path;
}

describe('decoder registry', () => {
  const containers = Object.keys(SAMPLES).filter((c): c is Container => Object.hasOwn(DECODERS, c));
  it('has a sample here for every entry', () => {
    expect(Object.keys(DECODERS).sort()).toEqual(containers.sort());
  });
  for (const container of containers) {
    it.runIf(encoders.has(SAMPLES[container][1]))(
      `${container}: detected from its bytes, probe agrees with open`,
      async () => {
        const path = make(container);
        expect(detectContainer(readFileSync(path).subarray(0, 4096))).toBe(container);
        const opened = await openAudioFile(path);
        expect(opened.format.container).toBe(container);
        const probed = await DECODERS[container].probe({ path, container, sizeBytes: statSync(path).size });
        expect(probed).toEqual(opened.format);
      },
    );
  }
  it('PCM containers, FLAC and MP3 can seek; the rest decode from the start', () => {
    const seeking = Object.entries(DECODERS)
      .filter(([, d]) => d.seek)
      .map(([c]) => c)
      .sort();
    expect(seeking).toEqual(['aifc', 'aiff', 'bw64', 'flac', 'mp3', 'rf64', 'wav']);
  });
});
