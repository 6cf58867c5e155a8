// analyzeFile and `earmark analyze --threads` give the same document with one thread or several,
// and `auto` (the CLI's default) the same again.
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import { main } from '../../src/cli/main.ts';
import { testSignals } from '../helpers/test-signals.ts';

let dir = '';
let file = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'earmark-threads-'));
  file = join(dir, 'clipped.wav');
  await writeWavFile(file, { sampleRate: 48_000, channels: 2, bitsPerSample: 24, float: false }, [
    testSignals(2, 5).clipped,
  ]);
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

const withoutTiming = ({ analysisSeconds: _, ...rest }: { analysisSeconds: number }) => rest;

describe('analysis threads', () => {
  it('analyzeFile gives the same document with 1 and 2 threads', async () => {
    const one = await analyzeFile(file, { threads: 1 });
    const two = await analyzeFile(file, { threads: 2 });
    expect(withoutTiming(two)).toEqual(withoutTiming(one));
    expect(one.summary.clippingRuns).toBeGreaterThan(0);
  }, 60_000);

  it('earmark analyze --threads 2 prints the same JSON; bad values are refused', async () => {
    const run = async (args: string[]) => {
      let out = '';
      const code = await main(['analyze', file, '--json', ...args], {
        stdout: (t) => {
          out += t;
        },
        stderr: () => {},
      });
      return { code, doc: code === 0 ? withoutTiming(JSON.parse(out)) : null };
    };
    const serial = await run(['--threads', '1']);
    const parallel = await run(['--threads', '2']);
    const auto = await run(['--threads', 'auto']);
    expect(parallel.code).toBe(0);
    expect(parallel.doc).toEqual(serial.doc);
    expect(auto.doc).toEqual(serial.doc);
    for (const bad of ['0', '1.5', 'two', '', '17']) expect((await run(['--threads', bad])).code).toBe(3);
  }, 60_000);
});
