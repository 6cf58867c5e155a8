// Every malformed or hostile input ends as its expected outcome, through the engine and the CLI.
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { generateMalformedCases, type MalformedCase } from '../../fixtures/malformed.ts';
import { wavBytes, seedSamples } from '../../fixtures/seeds.ts';
import { openPcmStream } from '../../src/decode/index.ts';
import { safeName } from '../../src/decode/safe-name.ts';
import { analyzeOutcome, cliOutcome, describeOutcome, matches } from '../../fixtures/outcome.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-malformed-'));
let cases: MalformedCase[] = [];

beforeAll(async () => {
  cases = await generateMalformedCases(dir);
});

describe('malformed inputs', () => {
  it('covers at least 40 cases across every container', () => {
    expect(cases.length).toBeGreaterThanOrEqual(40);
    const containers = new Set(cases.map((c) => c.container));
    for (const c of ['wav', 'rf64', 'bw64', 'aiff', 'aifc', 'flac', 'mp3', 'm4a', 'aac', 'ogg', 'webm', 'caf'])
      expect(containers).toContain(c);
    expect(new Set(cases.map((c) => c.id)).size).toBe(cases.length);
  });

  it('analyzeFile: each case ends as expected, typed, with finite numbers', async () => {
    const wrong: string[] = [];
    for (const c of cases) {
      const o = await analyzeOutcome(c.path, c.decode);
      if (!matches(o, c.expected))
        wrong.push(`${c.id}: expected ${c.expected}, got ${describeOutcome(o)} ${o.message ?? ''}`);
    }
    expect(wrong).toEqual([]);
  });

  it('CLI: each case ends as expected, errors as one safe stderr line with exit 3', async () => {
    const wrong: string[] = [];
    for (const c of cases) {
      const o = await cliOutcome(c.path);
      const expected = c.cliExpected ?? c.expected;
      if (!matches(o, expected)) wrong.push(`${c.id}: expected ${expected}, got ${describeOutcome(o)}`);
      if (o.kind.startsWith('error:')) {
        if (o.exitCode !== 3 || o.stdout !== '')
          wrong.push(`${c.id}: exit ${o.exitCode}, stdout ${JSON.stringify(o.stdout)}`);
        // One line, no control characters: a hostile file name cannot forge log lines or terminal escapes.
        if (/[\u0000-\u001f\u007f-\u009f]/.test(o.stderr.slice(0, -1)) || !o.stderr.endsWith('\n'))
          wrong.push(`${c.id}: unsafe stderr ${JSON.stringify(o.stderr)}`);
      }
    }
    expect(wrong).toEqual([]);
  });

  it('reports a hostile file name exactly in the JSON and escaped in errors', async () => {
    const ok = cases.find((c) => c.id === 'name-control-chars-ok')!;
    const o = await cliOutcome(ok.path);
    expect((JSON.parse(o.stdout) as { file: { name: string } }).file.name).toBe(basename(ok.path));
    const empty = cases.find((c) => c.id === 'name-control-chars-empty')!;
    expect((await cliOutcome(empty.path)).stderr).toContain(safeName(empty.path));
  });
});

describe('regressions', () => {
  it('safeName escapes control, DEL, C1, bidi and line-separator characters', () => {
    expect(safeName('a\nb\x1b[1m\x7f\u0085\u202e\u2028.wav')).toBe('"a\\nb\\u001b[1m\\u007f\\u0085\\u202e\\u2028.wav"');
    expect(safeName('plain/dir/x.wav')).toBe('"plain/dir/x.wav"');
  });

  it('a float WAV stream with a NaN sample is measured with 0 there and reported (stream path too)', async () => {
    const bytes = wavBytes(seedSamples(0.05), 32, true);
    new DataView(bytes.buffer).setFloat32(bytes.length - 40, NaN, true);
    const decoded = await openPcmStream(
      (async function* () {
        yield bytes;
      })(),
    );
    for await (const block of decoded.blocks)
      for (const ch of block.channelData) expect(ch.every(Number.isFinite)).toBe(true);
    expect(decoded.warnings).toEqual([
      expect.objectContaining({
        code: 'non_finite_samples',
        count: 1,
        atFrame: decoded.framesDecoded - 40 / 4 / decoded.format.channels,
      }),
    ]);
  });
});
