// `npm run bench:user`: the command a user runs, `npx earmark analyze <file> --json`, timed as a
// whole process (npx, start-up, decode, meters, hashing) beside `ffmpeg -af ebur128=peak=true` on
// the same file, runs alternating so both see the same machine load. Wall time and peak RSS
// (/usr/bin/time -v) per run; medians and ratios per file. The RSS of an npx run is that of the
// largest process in its tree, which is npm's own (about 90 MiB) when ours is smaller, so each
// run also starts `node bin/earmark.js` directly (what npx runs) for the command's own peak RSS.
// A benchmark, not a test: it prints figures and never fails on them.
//
// Files: the paths given as arguments, else two pink-noise WAVs made once with sox in the cache
// folder (60 minutes 48 kHz/24-bit stereo; 10 minutes 44.1 kHz/16-bit stereo).
// Environment: BENCH_USER_DIRS (the checkouts whose `npx earmark` runs, comma-separated, each
// after its own `npm ci`; default this one; several alternate within each run, e.g. before and
// after a change), BENCH_RUNS (default 5), BENCH_DIR (cache folder).

import { spawn, spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, rename } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

const runs = Number(process.env.BENCH_RUNS ?? 5);
const cacheDir = process.env.BENCH_DIR ?? join(tmpdir(), 'earmark-bench');
const checkouts = (process.env.BENCH_USER_DIRS ?? '.').split(',').map((dir) => resolve(dir));

interface RunFigures {
  seconds: number;
  peakRssMib: number;
}

/** A pink-noise WAV from sox in the cache folder, made once. */
async function pinkWav(name: string, seconds: number, sampleRate: number, bits: number): Promise<string> {
  const path = join(cacheDir, name);
  if (existsSync(path)) return path;
  await mkdir(cacheDir, { recursive: true });
  console.log(`generating ${path} (once) ...`);
  const partial = `${path}.partial.wav`;
  const format = ['-r', `${sampleRate}`, '-b', `${bits}`, '-c', '2'];
  const synth = ['synth', `${seconds}`, 'pinknoise', 'vol', '0.3'];
  const made = spawnSync('sox', ['-n', ...format, partial, ...synth], { encoding: 'utf8' });
  if (made.status !== 0) throw new Error(`sox could not make ${name}: ${made.stderr}`);
  await rename(partial, path);
  return path;
}

/** Runs `command` under /usr/bin/time -v in `cwd`: wall seconds and peak RSS (MiB). */
function timed(command: string, args: string[], cwd: string): Promise<RunFigures> {
  return new Promise((done, fail) => {
    const started = performance.now();
    const child = spawn('/usr/bin/time', ['-v', command, ...args], { cwd, stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr.setEncoding('utf8');
    child.stderr.on('data', (text: string) => {
      stderr += text;
    });
    child.on('error', fail);
    child.on('close', (code) => {
      const seconds = (performance.now() - started) / 1000;
      const rss = /Maximum resident set size \(kbytes\): (\d+)/.exec(stderr);
      // earmark exits 0 to 2 with a document; 3 and above, or no RSS line, is a failed run.
      if (code === null || code > 2 || rss === null) {
        fail(new Error(`${command} ${args.join(' ')} exited ${code}: ${stderr.slice(-2000)}`));
        return;
      }
      done({ seconds, peakRssMib: Number(rss[1]) / 1024 });
    });
  });
}

const median = (values: number[]) => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)];

const figures = (r: RunFigures) => `${r.seconds.toFixed(2)} s ${r.peakRssMib.toFixed(0)} MiB`;

async function benchFile(file: string): Promise<void> {
  const ours = checkouts.map((): RunFigures[] => []);
  const direct = checkouts.map((): RunFigures[] => []);
  const theirs: RunFigures[] = [];
  const ffmpegArgs = [
    '-nostdin',
    '-nostats',
    '-hide_banner',
    '-i',
    file,
    '-af',
    'ebur128=peak=true',
    '-f',
    'null',
    '-',
  ];
  for (let i = 0; i < runs; i++) {
    for (const [k, checkout] of checkouts.entries()) {
      ours[k].push(await timed('npx', ['earmark', 'analyze', file, '--json'], checkout));
      direct[k].push(await timed(process.execPath, ['bin/earmark.js', 'analyze', file, '--json'], checkout));
    }
    theirs.push(await timed('ffmpeg', ffmpegArgs, checkouts[0]));
    const mine = ours.map((runsOf, k) => `earmark[${k}] ${figures(runsOf[i])} (direct ${figures(direct[k][i])})`);
    console.log(`  run ${i + 1}: ${mine.join(', ')}, ffmpeg ${figures(theirs[i])}`);
  }
  const ffmpegSeconds = median(theirs.map((r) => r.seconds));
  const ffmpegRss = median(theirs.map((r) => r.peakRssMib));
  console.log(`  ffmpeg: median ${ffmpegSeconds.toFixed(2)} s, peak RSS ${ffmpegRss.toFixed(0)} MiB`);
  for (const [k, runsOf] of ours.entries()) {
    const seconds = median(runsOf.map((r) => r.seconds));
    const rss = median(runsOf.map((r) => r.peakRssMib));
    // Per-run ratios to the ffmpeg run beside them, then their median: load drifts between runs.
    const ratio = median(runsOf.map((r, i) => r.seconds / theirs[i].seconds));
    console.log(
      `  earmark[${k}]: median ${seconds.toFixed(2)} s (ratio of medians ${(seconds / ffmpegSeconds).toFixed(3)}, ` +
        `median of run ratios ${ratio.toFixed(3)}), peak RSS ${rss.toFixed(0)} MiB (${(rss / ffmpegRss).toFixed(2)}x ffmpeg)`,
    );
    const directSeconds = median(direct[k].map((r) => r.seconds));
    const directRss = median(direct[k].map((r) => r.peakRssMib));
    console.log(
      `  earmark[${k}] without npx: median ${directSeconds.toFixed(2)} s (${(directSeconds / ffmpegSeconds).toFixed(3)}), ` +
        `own peak RSS ${directRss.toFixed(0)} MiB (${(directRss / ffmpegRss).toFixed(2)}x ffmpeg)`,
    );
  }
}

async function main(): Promise<void> {
  const files = process.argv.slice(2).map((f) => resolve(f));
  if (files.length === 0) {
    files.push(await pinkWav('pink-60min-48k-24bit-stereo.wav', 3600, 48000, 24));
    files.push(await pinkWav('pink-10min-44k1-16bit-stereo.wav', 600, 44100, 16));
  }
  for (const [k, checkout] of checkouts.entries()) {
    const bundled = existsSync(join(checkout, 'dist', 'earmark.mjs')) ? 'dist/ present' : 'no dist/';
    console.log(`earmark[${k}]: ${checkout} (${bundled})`);
  }
  console.log(`${runs} alternating runs per file`);
  for (const file of files) {
    console.log(file);
    await benchFile(file);
  }
}

await main();
