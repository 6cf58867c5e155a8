// `npm run bench`: full analysis of a deterministic 60-minute 48 kHz stereo 24-bit WAV, timed as
// a whole process beside `ffmpeg -af ebur128=peak=true` on the same file, runs alternating.
// A benchmark, not a test: it prints figures and never fails on them.
//
// Environment: BENCH_MINUTES (default 60), BENCH_RUNS (default 5), BENCH_DIR (cache folder).

import { spawn, spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, rename, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { programmeBlocks } from '../src/selftest/signals.ts';
import { writeWavFile } from '../src/encode/wav.ts';

const minutes = Number(process.env.BENCH_MINUTES ?? 60);
const runs = Number(process.env.BENCH_RUNS ?? 5);
const cacheDir = process.env.BENCH_DIR ?? join(tmpdir(), 'earmark-bench');
const sampleRate = 48000;

async function benchFile(): Promise<string> {
  const path = join(cacheDir, `programme-${minutes}min-48k-stereo-24bit.wav`);
  if (existsSync(path)) return path;
  await mkdir(cacheDir, { recursive: true });
  console.log(`generating ${path} (once) ...`);
  const partial = `${path}.partial`;
  const blocks = (function* () {
    for (const block of programmeBlocks({ sampleRate, channels: 2, seconds: minutes * 60, seed: 2026, blockFrames: 1 << 16 })) {
      yield block.channelData as Float32Array[];
    }
  })();
  await writeWavFile(partial, { sampleRate, channels: 2, bitsPerSample: 24, float: false }, blocks);
  await rename(partial, path);
  return path;
}

interface RunFigures { seconds: number; maxRssMb: number }

/** Wall time of a reference command. */
function timed(command: string, args: string[]): Promise<RunFigures> {
  return new Promise((resolve, reject) => {
    const started = performance.now();
    const child = spawn(command, args, { stdio: 'ignore' });
    child.on('error', reject);
    child.on('exit', (code) => {
      const seconds = (performance.now() - started) / 1000;
      if (code !== 0) { reject(new Error(`${command} exited ${code}`)); return; }
      resolve({ seconds, maxRssMb: Number.NaN });
    });
  });
}

/** Peak RSS of a Node child measured from inside (process.resourceUsage, kilobytes). */
function earmarkRun(file: string): Promise<RunFigures> {
  return new Promise((resolve, reject) => {
    const started = performance.now();
    const child = spawn(process.execPath, ['bin/run.js', 'bench/analyze-once.ts', file], { stdio: ['ignore', 'pipe', 'inherit'] });
    let output = '';
    child.stdout.on('data', (chunk: Buffer) => { output += chunk.toString(); });
    child.on('error', reject);
    child.on('exit', (code) => {
      const seconds = (performance.now() - started) / 1000;
      if (code !== 0) { reject(new Error(`analysis exited ${code}`)); return; }
      const figures = JSON.parse(output) as { maxRssKb: number };
      resolve({ seconds, maxRssMb: figures.maxRssKb / 1024 });
    });
  });
}

const median = (values: number[]) => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)];

async function main(): Promise<void> {
  const file = await benchFile();
  const { size } = await stat(file);
  const audioSeconds = minutes * 60;
  const hasFfmpeg = spawnSync('ffmpeg', ['-version']).status === 0;
  console.log(`file: ${file} (${(size / 2 ** 20).toFixed(0)} MiB, ${minutes} min); ${runs} alternating runs${hasFfmpeg ? ' beside ffmpeg' : ' (ffmpeg not on PATH)'}`);
  const ours: RunFigures[] = [];
  const theirs: RunFigures[] = [];
  for (let i = 0; i < runs; i++) {
    ours.push(await earmarkRun(file));
    if (hasFfmpeg) theirs.push(await timed('ffmpeg', ['-nostdin', '-hide_banner', '-i', file, '-af', 'ebur128=peak=true', '-f', 'null', '-']));
    console.log(`  run ${i + 1}: earmark ${ours[i].seconds.toFixed(2)} s${hasFfmpeg ? `, ffmpeg ebur128 ${theirs[i].seconds.toFixed(2)} s` : ''}`);
  }
  const oursSeconds = median(ours.map((r) => r.seconds));
  console.log('');
  console.log(`earmark full analysis (every meter), one thread: ${oursSeconds.toFixed(2)} s median, ${(audioSeconds / oursSeconds).toFixed(0)}x realtime, peak RSS ${Math.max(...ours.map((r) => r.maxRssMb)).toFixed(0)} MB`);
  if (hasFfmpeg) {
    const ffmpegSeconds = median(theirs.map((r) => r.seconds));
    console.log(`ffmpeg -af ebur128=peak=true:                    ${ffmpegSeconds.toFixed(2)} s median, ${(audioSeconds / ffmpegSeconds).toFixed(0)}x realtime`);
    console.log(`ratio earmark / ffmpeg:                          ${(oursSeconds / ffmpegSeconds).toFixed(3)}`);
  }
}

await main();
