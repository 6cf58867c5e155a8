// `npm run bench:batch`: `earmark check <folder>` on a folder of deliveries as a user runs it
// (bin/earmark.js, what `npx earmark` runs: start-up, hashing, reports, summary table, JUnit file),
// one file at a time (--jobs 1) and on every core (--jobs = cores), beside ffmpeg's
// `-af ebur128=peak=true` over the same files one after another. Runs alternate so all three see
// the same machine load; medians of wall time. A benchmark, not a test: it prints figures only.
// Files (made once in the cache folder): brick-wall limited masters (stereo pink noise +12 dB into
// ffmpeg's alimiter, -1 dBFS) as 44.1 kHz/16-bit and 48 kHz/24-bit WAV, FLAC 16-bit and MP3 320k.
// Environment: BENCH_RUNS (default 3), BENCH_DIR (cache folder), BENCH_BATCH_SECONDS (per file, default 180).

import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, readdir, rename } from 'node:fs/promises';
import { availableParallelism, tmpdir } from 'node:os';
import { join } from 'node:path';

const runs = Number(process.env.BENCH_RUNS ?? 3);
const seconds = Number(process.env.BENCH_BATCH_SECONDS ?? 180);
const dir = join(process.env.BENCH_DIR ?? join(tmpdir(), 'earmark-bench'), `batch-${seconds}s`);
const cores = availableParallelism();

const limiter = (seed: number, rate: number) => [
  ...['-f', 'lavfi', '-i', `anoisesrc=c=pink:a=0.3:d=${seconds}:r=${rate}:seed=${seed}`],
  ...['-f', 'lavfi', '-i', `anoisesrc=c=pink:a=0.3:d=${seconds}:r=${rate}:seed=${seed + 1}`],
  '-filter_complex',
  '[0][1]join=inputs=2:channel_layout=stereo,volume=12dB,alimiter=limit=0.891:attack=1:release=50:level=false',
];

const FILES: Array<[name: string, args: string[]]> = [
  ['master-a-44k1-16.wav', [...limiter(1, 44100), '-c:a', 'pcm_s16le']],
  ['master-b-44k1-16.wav', [...limiter(3, 44100), '-c:a', 'pcm_s16le']],
  ['master-c-48k-24.wav', [...limiter(5, 48000), '-c:a', 'pcm_s24le']],
  ['master-d-48k-24.wav', [...limiter(7, 48000), '-c:a', 'pcm_s24le']],
  ['master-e.flac', [...limiter(9, 44100), '-c:a', 'flac', '-sample_fmt', 's16']],
  ['master-f.mp3', [...limiter(11, 44100), '-c:a', 'libmp3lame', '-b:a', '320k']],
];

async function makeFiles(): Promise<string[]> {
  await mkdir(dir, { recursive: true });
  for (const [name, args] of FILES) {
    const path = join(dir, name);
    if (existsSync(path)) continue;
    const partial = join(dir, `.partial-${name}`);
    const made = spawnSync('ffmpeg', ['-nostdin', '-v', 'error', '-y', ...args, partial], {
      stdio: 'inherit',
    });
    if (made.status !== 0) throw new Error(`ffmpeg could not make ${name}`);
    await rename(partial, path);
  }
  return (await readdir(dir)).filter((n) => !n.startsWith('.') && !n.endsWith('.xml')).map((n) => join(dir, n));
}

function timed(command: string, args: string[], okCodes: number[]): number {
  const started = process.hrtime.bigint();
  const run = spawnSync(command, args, { stdio: ['ignore', 'ignore', 'pipe'], maxBuffer: 64 * 1024 * 1024 });
  const seconds = Number(process.hrtime.bigint() - started) / 1e9;
  if (run.status === null || !okCodes.includes(run.status))
    throw new Error(`${command} ${args.join(' ')} exited ${run.status}: ${run.stderr.toString().slice(-500)}`);
  return seconds;
}

const median = (values: number[]) => {
  const sorted = [...values].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
};

async function main() {
  const files = await makeFiles();
  // Verdicts exit 0/1/2; 3 would be an error.
  const check = (jobs: number) =>
    timed(
      process.execPath,
      ['bin/earmark.js', 'check', dir, '--profile', 'ebu-r128', '--jobs', String(jobs), '--junit', join(dir, 'x.xml')],
      [0, 1, 2],
    );
  const ffmpeg = () => {
    let total = 0;
    for (const file of files)
      total += timed(
        'ffmpeg',
        ['-nostdin', '-v', 'error', '-i', file, '-af', 'ebur128=peak=true', '-f', 'null', '-'],
        [0],
      );
    return total;
  };
  const one: number[] = [];
  const all: number[] = [];
  const reference: number[] = [];
  for (let run = 0; run < runs; run++) {
    one.push(check(1));
    all.push(check(cores));
    reference.push(ffmpeg());
    console.log(
      `run ${run + 1}: --jobs 1 ${one.at(-1)?.toFixed(1)} s, --jobs ${cores} ${all.at(-1)?.toFixed(1)} s, ffmpeg ${reference.at(-1)?.toFixed(1)} s`,
    );
  }
  const audioSeconds = files.length * seconds;
  const [m1, mAll, mRef] = [median(one), median(all), median(reference)];
  console.log(
    `\n${files.length} files, ${audioSeconds} s of audio, ${cores} cores, medians of ${runs} alternating runs:`,
  );
  console.log(
    `earmark check <folder> --jobs 1        ${m1.toFixed(1)} s  (${(audioSeconds / m1).toFixed(0)}x real time)`,
  );
  console.log(
    `earmark check <folder> --jobs ${cores}        ${mAll.toFixed(1)} s  (${(audioSeconds / mAll).toFixed(0)}x real time)`,
  );
  console.log(`ffmpeg ebur128=peak=true, one by one   ${mRef.toFixed(1)} s`);
  console.log(`speed-up of --jobs ${cores} over --jobs 1: ${(m1 / mAll).toFixed(2)}x`);
  console.log(`--jobs ${cores} time / ffmpeg time: ${(mAll / mRef).toFixed(2)} (under 1 is faster)`);
}

await main();
