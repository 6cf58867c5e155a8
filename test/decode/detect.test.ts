// Container detection by magic bytes. Synthetic headers cite their specs; real files come from
// Debian ffmpeg (/usr/bin/ffmpeg) so detection is checked against an outside muxer.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { detectContainer, id3v2Length } from '../../src/decode/detect.ts';
import { openAudioFile } from '../../src/decode/index.ts';
import type { Container } from '../../src/decode/types.ts';
import { hasTool } from '../helpers/tools.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-detect-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const bytes = (...parts: (string | number[])[]): Uint8Array =>
  new Uint8Array(parts.flatMap((p) => (typeof p === 'string' ? [...p].map((c) => c.charCodeAt(0)) : p)));

/** ID3v2.4 header (id3.org "ID3 tag version 2.4.0 - Main Structure" 3.1): synchsafe 28-bit size. */
const id3 = (bodyBytes: number, footer = false): number[] => [
  0x49,
  0x44,
  0x33,
  4,
  0,
  footer ? 0x10 : 0,
  (bodyBytes >> 21) & 0x7f,
  (bodyBytes >> 14) & 0x7f,
  (bodyBytes >> 7) & 0x7f,
  bodyBytes & 0x7f,
  ...new Array(bodyBytes).fill(0),
  ...(footer ? [0x33, 0x44, 0x49, 4, 0, 0x10, 0, 0, 0, 0] : []),
];

/** MPEG-1 layer III, 128 kbit/s, 44.1 kHz, no padding (ISO/IEC 11172-3 2.4.1.3): 144*128000/44100 = 417 bytes. */
const MP3_HEADER = [0xff, 0xfb, 0x90, 0x00];
const mp3Frame = (): number[] => [...MP3_HEADER, ...new Array(413).fill(0)];
/** ADTS, MPEG-4 AAC LC, 44.1 kHz, 2 channels, frame length 256 (ISO/IEC 13818-7 6.2 adts_frame). */
const ADTS_HEADER = [0xff, 0xf1, 0x50, 0x80, 0x20, 0x1f, 0xfc];
const adtsFrame = (): number[] => [...ADTS_HEADER, ...new Array(249).fill(0)];

describe('detectContainer on synthetic headers', () => {
  it('RIFF family, FORM family (Microsoft RIFF; EBU Tech 3306; ITU-R BS.2088; Apple AIFF 1.3)', () => {
    expect(detectContainer(bytes('RIFF', [0, 0, 0, 0], 'WAVE'))).toBe('wav');
    expect(detectContainer(bytes('RF64', [0xff, 0xff, 0xff, 0xff], 'WAVE'))).toBe('rf64');
    expect(detectContainer(bytes('BW64', [0xff, 0xff, 0xff, 0xff], 'WAVE'))).toBe('bw64');
    expect(detectContainer(bytes('FORM', [0, 0, 0, 4], 'AIFF'))).toBe('aiff');
    expect(detectContainer(bytes('FORM', [0, 0, 0, 4], 'AIFC'))).toBe('aifc');
    expect(detectContainer(bytes('RIFF', [0, 0, 0, 0], 'AVI '))).toBeNull();
    expect(detectContainer(bytes('FORM', [0, 0, 0, 4], '8SVX'))).toBeNull();
  });
  it('FLAC (RFC 9639 "fLaC" marker), Ogg (RFC 3533 capture pattern, version 0), EBML (RFC 8794), CAF, ISO-BMFF ftyp (ISO/IEC 14496-12 4.3)', () => {
    expect(detectContainer(bytes('fLaC', [0, 0, 0, 34]))).toBe('flac');
    expect(detectContainer(bytes('OggS', [0, 2]))).toBe('ogg');
    expect(detectContainer(bytes('OggS', [1, 2]))).toBeNull();
    expect(detectContainer(new Uint8Array([0x1a, 0x45, 0xdf, 0xa3, 0x9f]))).toBe('webm');
    expect(detectContainer(bytes('caff', [0, 1, 0, 0]))).toBe('caf');
    expect(detectContainer(bytes([0, 0, 0, 0x20], 'ftypM4A ', [0, 0, 0, 0]))).toBe('m4a');
    expect(detectContainer(bytes([0, 0, 0, 0x18], 'ftypisom'))).toBe('m4a');
  });
  it('ID3v2 then FLAC, MPEG audio or ADTS; footer flag adds 10 bytes', () => {
    expect(id3v2Length(bytes(id3(100)))).toBe(110);
    expect(id3v2Length(bytes(id3(100, true)))).toBe(120);
    // Synchsafe size bytes stay below 0x80, versions are 2 to 4 (ID3v2.4 main structure 3.1, from memory).
    expect(id3v2Length(bytes('ID3', [4, 0, 0, 0, 0, 0x80, 0]))).toBe(0);
    expect(id3v2Length(bytes('ID3', [5, 0, 0, 0, 0, 1, 0]))).toBe(0);
    expect(id3v2Length(bytes('ID3', [3, 0xff, 0, 0, 0, 1, 0]))).toBe(0);
    expect(detectContainer(bytes(id3(100), 'fLaC', [0, 0, 0, 34]))).toBe('flac');
    expect(detectContainer(bytes(id3(100, true), mp3Frame()))).toBe('mp3');
    expect(detectContainer(bytes(id3(20), [0xff, 0xfd, 0x90, 0x00]))).toBe('mp3'); // layer II after a tag
    expect(detectContainer(bytes(id3(20), adtsFrame()))).toBe('aac');
    expect(detectContainer(bytes(id3(20), 'junk'))).toBeNull();
    expect(detectContainer(bytes(id3(5000)).subarray(0, 4096))).toBeNull(); // tag runs past the head
  });
  it('bare frame sync: valid layer III (checked against the next header when visible), ADTS', () => {
    expect(detectContainer(bytes(mp3Frame(), MP3_HEADER))).toBe('mp3');
    expect(detectContainer(bytes(MP3_HEADER, [0, 0]))).toBe('mp3');
    expect(detectContainer(bytes(mp3Frame(), [0x12, 0x34, 0x56, 0x78]))).toBeNull(); // no second sync
    expect(detectContainer(new Uint8Array([0xff, 0xfd, 0x90, 0x00]))).toBeNull(); // layer II bare
    expect(detectContainer(new Uint8Array([0xff, 0xfb, 0xf0, 0x00]))).toBeNull(); // bitrate index 15
    expect(detectContainer(new Uint8Array([0xff, 0xfb, 0x9c, 0x00]))).toBeNull(); // sample-rate index 3
    expect(detectContainer(new Uint8Array([0xff, 0xeb, 0x90, 0x00]))).toBeNull(); // version 01 reserved
    expect(detectContainer(bytes(adtsFrame(), ADTS_HEADER))).toBe('aac');
    expect(detectContainer(new Uint8Array([0xff, 0xf1, 0x3c, 0x80, 0x20, 0x1f, 0xfc]))).toBeNull(); // rate index 15
  });
  it('random bytes, empty and short input are null', () => {
    let seed = 99;
    for (let n = 0; n < 200; n++) {
      const head = Uint8Array.from({ length: 4096 }, () => ((seed = (seed * 1103515245 + 12345) >>> 0) >>> 16) & 0xff);
      if (head[0] === 0xff) head[0] = 0; // a random frame sync could legitimately look like MPEG
      expect(detectContainer(head)).toBeNull();
    }
    expect(detectContainer(new Uint8Array(0))).toBeNull();
    expect(detectContainer(bytes('RIF'))).toBeNull();
    expect(detectContainer(bytes('ID3'))).toBeNull();
  });
});

describe('files written by ffmpeg', () => {
  const encoders = new Set(
    hasTool('ffmpeg')
      ? execFileSync('/usr/bin/ffmpeg', ['-v', 'error', '-encoders'])
          .toString()
          .split('\n')
          .map((l) => l.trim().split(/\s+/)[1])
      : [],
  );
  const cases: [string, string[], Container, string][] = [
    ['x.flac', ['-c:a', 'flac'], 'flac', 'flac'],
    ['x.mp3', ['-c:a', 'libmp3lame', '-metadata', 'title=Invented demo'], 'mp3', 'libmp3lame'],
    ['bare.mp3', ['-c:a', 'libmp3lame', '-id3v2_version', '0', '-write_xing', '0'], 'mp3', 'libmp3lame'],
    ['x.aac', ['-c:a', 'aac', '-f', 'adts'], 'aac', 'aac'],
    ['x.m4a', ['-c:a', 'aac'], 'm4a', 'aac'],
    ['x.ogg', ['-c:a', 'libvorbis'], 'ogg', 'libvorbis'],
    ['x.opus', ['-c:a', 'libopus'], 'ogg', 'libopus'],
    ['x.webm', ['-c:a', 'libopus'], 'webm', 'libopus'],
    ['x.caf', ['-c:a', 'pcm_s16le'], 'caf', 'pcm_s16le'],
    ['x.wav', ['-c:a', 'pcm_s16le'], 'wav', 'pcm_s16le'],
    ['x.aiff', ['-c:a', 'pcm_s16be'], 'aiff', 'pcm_s16be'],
  ];
  for (const [name, args, container, encoder] of cases) {
    it.runIf(encoders.has(encoder))(
      `${name} -> ${container}, from the bytes even under a misleading name`,
      async () => {
        const path = join(dir, name);
        execFileSync('/usr/bin/ffmpeg', [
          '-v',
          'error',
          '-y',
          '-f',
          'lavfi',
          '-i',
          'sine=frequency=440:sample_rate=48000:duration=0.2',
          ...args,
          path,
        ]);
        expect(detectContainer(readFileSync(path).subarray(0, 4096))).toBe(container);
        const misnamed = join(dir, `${name}.txt`);
        writeFileSync(misnamed, readFileSync(path));
        expect((await openAudioFile(misnamed)).format.container).toBe(container);
      },
    );
  }
  it.runIf(encoders.has('libmp3lame'))(
    'an ID3v2 tag longer than the detection head is followed by openAudioFile',
    async () => {
      const path = join(dir, 'long-tag.mp3');
      execFileSync('/usr/bin/ffmpeg', [
        '-v',
        'error',
        '-y',
        '-f',
        'lavfi',
        '-i',
        'sine=duration=0.2',
        '-c:a',
        'libmp3lame',
        '-metadata',
        `comment=${'invented demo text '.repeat(600)}`,
        path,
      ]);
      const head = readFileSync(path).subarray(0, 4096);
      expect(id3v2Length(head)).toBeGreaterThan(4096);
      expect(detectContainer(head)).toBeNull();
      expect((await openAudioFile(path)).format.container).toBe('mp3');
    },
  );
  it('FLAC behind a synthetic ID3v2 tag', async () => {
    const flac = join(dir, 'tagged.flac');
    execFileSync('/usr/bin/ffmpeg', [
      '-v',
      'error',
      '-y',
      '-f',
      'lavfi',
      '-i',
      'sine=duration=0.1',
      '-c:a',
      'flac',
      join(dir, 'plain.flac'),
    ]);
    writeFileSync(flac, new Uint8Array([...id3(6000), ...readFileSync(join(dir, 'plain.flac'))]));
    expect((await openAudioFile(flac)).format.container).toBe('flac');
  });
});
