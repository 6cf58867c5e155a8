// The plain-JavaScript bundles (`npm run build`, bin/build.js) read what the TypeScript sources read,
// including the analysis thread they start for --threads, and find the shipped schemas.
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeWavFile } from '../../src/encode/wav.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-bundle-'));
// Inside the project, as dist/ is: packages and openapi/ are found from the bundle's folder upwards.
mkdirSync('test-output', { recursive: true });
const out = mkdtempSync(join('test-output', 'bundle-'));
const wav = join(dir, 'programme.wav');

beforeAll(async () => {
  const blocks = (function* () {
    for (const b of programmeBlocks({ sampleRate: 48000, channels: 2, seconds: 8, seed: 5 }))
      yield b.channelData as Float32Array[];
  })();
  await writeWavFile(wav, { sampleRate: 48000, channels: 2, bitsPerSample: 24, float: false }, blocks);
  const built = spawnSync(process.execPath, ['bin/build.js', out], { encoding: 'utf8' });
  expect(built.status, built.stderr).toBe(0);
}, 60_000);

afterAll(() => {
  rmSync(out, { recursive: true, force: true });
  rmSync(dir, { recursive: true, force: true });
});

/** The analysis JSON without the fields that differ run to run. */
function analysis(command: string[], args: string[]): Record<string, unknown> {
  const run = spawnSync(process.execPath, [...command, 'analyze', wav, '--json', ...args], { encoding: 'utf8' });
  expect(run.status, run.stderr).toBe(0);
  const { analysisSeconds: _, ...rest } = JSON.parse(run.stdout) as Record<string, unknown>;
  return rest;
}

describe('dist bundles', () => {
  it('give the same analysis document as the TypeScript sources, on one thread and on two', () => {
    const fromSources = analysis(['bin/run.js', 'src/cli/bin.ts'], []);
    expect(analysis([join(out, 'earmark.mjs')], [])).toEqual(fromSources);
    expect(analysis([join(out, 'earmark.mjs')], ['--threads', '2'])).toEqual(fromSources);
  }, 60_000);

  it('check a file against a built-in profile (the profile schema is found from the bundle)', () => {
    const run = spawnSync(
      process.execPath,
      [join(out, 'earmark.mjs'), 'check', wav, '--profile', 'ebu-r128', '--json'],
      { encoding: 'utf8' },
    );
    expect([0, 1, 2]).toContain(run.status); // pass, warn or fail: a verdict either way, not an error (3)
    const report = JSON.parse(run.stdout) as { profile: { id: string } };
    expect(report.profile.id).toBe('ebu-r128');
  }, 60_000);
});
