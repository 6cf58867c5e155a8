// The command line's own conveniences: --version, a negative number after a space, and a
// suggestion for a mistyped command.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { joinNegativeValues, suggestion } from '../../src/cli/args.ts';
import { formatAnalysis } from '../../src/cli/format-analysis.ts';
import { main } from '../../src/cli/main.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { ENGINE_VERSION } from '../../src/engine/document.ts';
import { toneBlocks } from '../../src/selftest/signals.ts';

function run(argv: string[]) {
  const out: string[] = [];
  const err: string[] = [];
  const io = { stdout: (t: string) => void out.push(t), stderr: (t: string) => void err.push(t) };
  return main(argv, io).then((code) => ({ code, out: out.join(''), err: err.join('') }));
}

const dir = mkdtempSync(join(tmpdir(), 'earmark-cli-args-'));
const tone = join(dir, 'tone.wav');
beforeAll(async () => {
  const format = { sampleRate: 48000, channels: 2, bitsPerSample: 24, float: false };
  const blocks = (function* () {
    for (const b of toneBlocks({ sampleRate: 48000, channels: 2, segments: [{ seconds: 3, peakDbfs: -20 }] }))
      yield [...b.channelData];
  })();
  await writeWavFile(tone, format, blocks);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('command-line arguments', () => {
  it('--version prints the engine version and exits 0', async () => {
    const r = await run(['--version']);
    expect(r.code).toBe(0);
    expect(r.out).toBe(`earmark ${ENGINE_VERSION}\n`);
  });

  it('takes a negative number after a space, as the help shows it', async () => {
    const r = await run(['analyze', tone, '--json', '--silence-threshold', '-50', '--true-peak-ceiling', '-2.5']);
    expect(r.code, r.err).toBe(0);
    const doc = JSON.parse(r.out);
    expect(doc.settings.silence.thresholdDbfs).toBe(-50);
    expect(doc.settings.overCeilingDbtp).toBe(-2.5);
  });

  it('joins only numbers to flags that take a value; a flag after a flag is still a flag', () => {
    const options = { 'silence-threshold': { type: 'string' }, json: { type: 'boolean' } } as const;
    expect(joinNegativeValues(['--silence-threshold', '-.5', 'f.wav'], options)).toEqual([
      '--silence-threshold=-.5',
      'f.wav',
    ]);
    expect(joinNegativeValues(['--json', '-5'], options)).toEqual(['--json', '-5']);
    expect(joinNegativeValues(['--silence-threshold', '--json'], options)).toEqual(['--silence-threshold', '--json']);
  });

  it('suggests the command a slip was meant to be, and nothing for a different word', async () => {
    const r = await run(['analyse', tone]);
    expect(r.code).toBe(3);
    expect(r.err).toContain('unknown command "analyse" (did you mean "analyze"?)');
    expect(suggestion('chekc', ['analyze', 'check', 'profiles'])).toBe('check');
    expect(suggestion('PROFILE', ['analyze', 'check', 'profiles'])).toBe('profiles');
    expect(suggestion('upload', ['analyze', 'check', 'profiles'])).toBeNull();
  });

  it('lists 20 events and says how many more, or every one with --all', async () => {
    const doc = await analyzeFile(tone);
    const one = {
      kind: 'clipping' as const,
      channel: 0,
      startFrame: 0,
      endFrame: 48,
      startSeconds: 0,
      endSeconds: 0.001,
    };
    const many = {
      ...doc,
      events: Array.from({ length: 30 }, (_, i) => ({ ...one, startSeconds: i, endSeconds: i + 0.001 })),
    };
    const short = formatAnalysis(many);
    expect(short.match(/ clipping /g)).toHaveLength(20);
    expect(short).toContain('... 10 more (--all lists them)');
    const full = formatAnalysis(many, { all: true });
    expect(full.match(/ clipping /g)).toHaveLength(30);
    expect(full).not.toContain('more (');
  });
});
