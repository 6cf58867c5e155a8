// `earmark check` on many files and folders, and its exports for one file, through main() with
// captured output: exit code the worst verdict (0 pass, 1 warn, 2 fail; 3 when a file could not
// be checked), the summary table, the CSV and JUnit files, the markers WAV.
import { mkdirSync, readFileSync, renameSync, writeFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { expandInputs } from '../../src/cli/batch.ts';
import { main } from '../../src/cli/main.ts';
import { readCueMarkers } from '../../src/decode/cue.ts';
import { writeAiffFile } from '../../src/encode/wav.ts';
import type { QcReport } from '../../src/profiles/index.ts';
import { SAMPLE_RATE, setRange, tempDir, writeTone } from '../profiles/helpers.ts';
import { capture } from '../helpers/cli-io.ts';

const { dir, cleanup } = tempDir();
const folder = join(dir, 'delivery');
let onTarget = '';
let loud = '';
beforeAll(async () => {
  mkdirSync(join(folder, 'reels', '.hidden'), { recursive: true });
  // EBU Tech 3341 case 1 style: a stereo 1 kHz sine at -23 dBFS peak reads -23.0 LUFS.
  onTarget = join(folder, 'a-on-target.wav');
  renameSync(await writeTone(dir, { segments: [{ seconds: 4, peakDbfs: -23 }] }), onTarget);
  loud = join(folder, 'reels', 'b-loud.wav');
  renameSync(
    await writeTone(dir, { segments: [{ seconds: 4, peakDbfs: -14 }], edit: setRange(48_000, 48_010, 0.999) }),
    loud,
  );
  writeFileSync(join(folder, 'reels', '.hidden', 'skip.wav'), 'not audio');
  writeFileSync(join(folder, 'notes.txt'), 'not audio');
  writeFileSync(join(folder, 'old.markers.wav'), 'our own output');
}, 60_000);
afterAll(cleanup);

describe('earmark check on one file: exports', () => {
  it('--csv, --junit and --markers write their files beside the usual output', async () => {
    const io = capture();
    const [csv, junit, markers] = ['one.csv', 'one.xml', 'one.markers.wav'].map((n) => join(dir, n));
    const code = await main(
      ['check', loud, '--profile', 'ebu-r128', '--csv', csv, '--junit', junit, '--markers', markers],
      io,
    );
    expect(code).toBe(2);
    expect(io.out).toContain('verdict  FAIL');
    const report = JSON.parse(await jsonOf(loud)) as QcReport;
    expect(io.out).toContain(`markers  ${report.flags.length} written to`);
    expect(readFileSync(csv, 'utf8').split('\r\n').length).toBe(report.flags.length + 2);
    expect(readFileSync(junit, 'utf8')).toContain('tests="1" failures="1" errors="0" skipped="0"');
    expect((await readCueMarkers(markers)).map((m) => m.sampleOffset)).toEqual(report.flags.map((f) => f.startSample));
  }, 60_000);

  it('a file that cannot be checked still gets its JUnit file, with the error in it', async () => {
    const io = capture();
    const junit = join(dir, 'missing.xml');
    expect(await main(['check', join(dir, 'nope.wav'), '--profile', 'ebu-r128', '--junit', junit], io)).toBe(3);
    expect(io.err).toContain('error file_not_found');
    expect(readFileSync(junit, 'utf8')).toContain('tests="1" failures="0" errors="1" skipped="0"');
  });

  it('refuses --markers over the file checked, and a file outside the WAVE family', async () => {
    let io = capture();
    expect(await main(['check', onTarget, '--profile', 'ebu-r128', '--markers', onTarget], io)).toBe(3);
    expect(io.err).toContain('error invalid_argument: --markers must name a new file');
    io = capture();
    expect(await main(['check', onTarget, loud, '--profile', 'ebu-r128', '--csv', loud], io)).toBe(3);
    expect(io.err).toContain('--csv must name a new file');
    const aiff = join(dir, 'tone.aiff');
    const tone = new Float32Array(SAMPLE_RATE * 2).map(
      (_, i) => 0.1 * Math.sin((2 * Math.PI * 1000 * i) / SAMPLE_RATE),
    );
    await writeAiffFile(aiff, { sampleRate: SAMPLE_RATE, channels: 1, bitsPerSample: 16 }, [[tone]]);
    io = capture();
    expect(await main(['check', aiff, '--profile', 'ebu-r128', '--markers', join(dir, 'x.wav')], io)).toBe(3);
    expect(io.err).toContain('error markers_need_wave');
    expect(existsSync(join(dir, 'x.wav'))).toBe(false);
  }, 60_000);
});

async function jsonOf(file: string): Promise<string> {
  const io = capture();
  await main(['check', file, '--profile', 'ebu-r128', '--json'], io);
  return io.out;
}

describe('earmark check on many files', () => {
  it('walks folders (recursively, audio only, no hidden entries, none of our outputs)', async () => {
    expect(await expandInputs([folder])).toEqual([onTarget, loud]);
    expect(await expandInputs([folder, onTarget, join(folder, 'notes.txt')])).toEqual([
      onTarget,
      loud,
      join(folder, 'notes.txt'),
    ]);
  });

  it('prints a summary table and exits with the worst verdict; CSV and JUnit cover every file', async () => {
    const io = capture();
    const [csv, junit] = [join(dir, 'batch.csv'), join(dir, 'batch.xml')];
    const code = await main(
      ['check', folder, '--profile', 'ebu-r128', '--jobs', '2', '--csv', csv, '--junit', junit],
      io,
    );
    expect(code).toBe(2);
    const lines = io.out.trimEnd().split('\n');
    expect(lines[0]).toMatch(/^file +verdict +integrated +true peak +fail flags +warn flags +remarks$/);
    expect(lines[1]).toMatch(/a-on-target\.wav +PASS +-23\.0 LUFS +-23\.0 dBTP +0 +0 +\d+$/);
    expect(lines[2]).toMatch(/b-loud\.wav +FAIL +-14\.0 LUFS +1\.0 dBTP +2 +0 +\d+$/);
    expect(lines.at(-1)).toBe('2 files: 1 pass, 0 warn, 1 fail, 0 not checked');
    expect(io.err).toContain('[2/2]');
    const rows = readFileSync(csv, 'utf8').trimEnd().split('\r\n').slice(1);
    expect(new Set(rows.map((r) => r.split(',')[0]))).toEqual(new Set([onTarget, loud]));
    expect(readFileSync(junit, 'utf8')).toContain('tests="2" failures="1" errors="0" skipped="0"');
  }, 120_000);

  it('a file that cannot be read is an error row, a JUnit <error> and exit 3', async () => {
    const broken = join(dir, 'broken.wav');
    writeFileSync(broken, 'RIFF\u0004\u0000\u0000\u0000WAVE');
    const io = capture();
    const junit = join(dir, 'errors.xml');
    const code = await main(
      ['check', onTarget, broken, join(dir, 'missing.wav'), '--profile', 'ebu-r128', '--jobs', '1', '--junit', junit],
      io,
    );
    expect(code).toBe(3);
    expect(io.out).toMatch(/broken\.wav +ERROR/);
    expect(io.out).toContain('missing.wav: error file_not_found');
    expect(io.out).toContain('3 files: 1 pass, 0 warn, 0 fail, 2 not checked');
    expect(readFileSync(junit, 'utf8')).toContain('tests="3" failures="0" errors="2" skipped="0"');
  }, 120_000);

  it('--json prints one summary per file', async () => {
    const io = capture();
    expect(await main(['check', onTarget, join(dir, 'missing.wav'), '--profile', 'ebu-r128', '--json'], io)).toBe(3);
    const rows = JSON.parse(io.out);
    expect(rows).toMatchObject([
      { file: onTarget, verdict: 'pass', profile: { id: 'ebu-r128' }, flagCounts: { fail: 0, warn: 0 } },
      { file: join(dir, 'missing.wav'), error: { code: 'file_not_found' } },
    ]);
    // EBU Tech 3341 case 1 style: -23 dBFS peak stereo sine reads -23.0 LUFS (+/-0.1 LU).
    expect(rows[0].integratedLufs).toBeCloseTo(-23, 1);
  }, 60_000);

  it('refuses --markers for many files and a bad --jobs', async () => {
    let io = capture();
    expect(await main(['check', folder, '--profile', 'ebu-r128', '--markers', join(dir, 'm.wav')], io)).toBe(3);
    expect(io.err).toContain('--markers writes the markers of one file');
    io = capture();
    expect(await main(['check', onTarget, loud, '--profile', 'ebu-r128', '--jobs', '0'], io)).toBe(3);
    expect(io.err).toContain('--jobs must be');
  });
});
