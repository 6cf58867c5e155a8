// `npm run bench:harness` (a diagnostic; the headline is `npm run bench`): full analysis of a
// deterministic 60-minute 48 kHz stereo 24-bit WAV, timed as
// a whole process beside `ffmpeg -af ebur128=peak=true` on the same file, runs alternating.
// A benchmark, not a test: it prints figures and never fails on them.
//
// Prints, per target of the performance issue, our figure, the reference figure and the ratio:
// wall time against ffmpeg ebur128 (one thread and two), peak RSS and its growth with duration, and FLAC /
// MP3 decode plus full analysis in x-realtime (encoded from the WAV once with ffmpeg, cached).
//
// Environment: BENCH_MINUTES (default 60), BENCH_RUNS (default 5), BENCH_DIR (cache folder),
// BENCH_SHORT_MINUTES (default 10: the short file for RSS growth and the compressed inputs),
// BENCH_LONG_MINUTES (optional, e.g. 180: adds a long file to the RSS comparison),
// BENCH_SURROUND_MINUTES (optional, e.g. 10: adds a 5.1 file to the RSS comparison),
// BENCH_RSS_RUNS (default 3: runs per file for the RSS comparisons, medians).

import { spawn, spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, rename, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { programmeBlocks } from '../src/selftest/signals.ts';
import type { Meter, PcmBlock, StreamInfo } from '../src/analysis/audio.ts';
import { DropoutMeter } from '../src/analysis/dropouts.ts';
import { ReconstructedPeakMeter } from '../src/analysis/reconstructed-peak.ts';
import { TruePeakMeter } from '../src/analysis/true-peak.ts';
import { writeWavFile } from '../src/encode/wav.ts';

const minutes = Number(process.env.BENCH_MINUTES ?? 60);
const shortMinutes = Number(process.env.BENCH_SHORT_MINUTES ?? 10);
const longMinutes = process.env.BENCH_LONG_MINUTES ? Number(process.env.BENCH_LONG_MINUTES) : null;
const surroundMinutes = process.env.BENCH_SURROUND_MINUTES ? Number(process.env.BENCH_SURROUND_MINUTES) : null;
const runs = Number(process.env.BENCH_RUNS ?? 5);
/** Runs per file for the peak-RSS comparisons (BENCH_RSS_RUNS). */
const RSS_RUNS = Number(process.env.BENCH_RSS_RUNS ?? 3);
const cacheDir = process.env.BENCH_DIR ?? join(tmpdir(), 'earmark-bench');
const sampleRate = 48000;

async function benchFile(minutes: number, channels = 2): Promise<string> {
  const path = join(cacheDir, `programme-${minutes}min-48k-${channels === 6 ? '5.1' : 'stereo'}-24bit.wav`);
  if (existsSync(path)) return path;
  await mkdir(cacheDir, { recursive: true });
  console.log(`generating ${path} (once) ...`);
  const partial = `${path}.partial`;
  const blocks = (function* () {
    for (const block of programmeBlocks({
      sampleRate,
      channels,
      seconds: minutes * 60,
      seed: 2026,
      blockFrames: 1 << 16,
    })) {
      yield block.channelData as Float32Array[];
    }
  })();
  await writeWavFile(
    partial,
    { sampleRate, channels, bitsPerSample: 24, float: false, ...(channels === 6 ? { channelMask: 0x3f } : {}) },
    blocks,
  );
  await rename(partial, path);
  return path;
}

interface RunFigures {
  seconds: number;
  maxRssMb: number;
}

/** Wall time of a reference command. */
function timed(command: string, args: string[]): Promise<RunFigures> {
  return new Promise((resolve, reject) => {
    const started = performance.now();
    const child = spawn(command, args, { stdio: 'ignore' });
    child.on('error', reject);
    child.on('exit', (code) => {
      const seconds = (performance.now() - started) / 1000;
      if (code !== 0) {
        reject(new Error(`${command} exited ${code}`));
        return;
      }
      resolve({ seconds, maxRssMb: Number.NaN });
    });
  });
}

// The analysis runs as the bundled JavaScript that `earmark` runs after `npm run build` (no
// TypeScript loader in the process); the bench builds it first so it is never stale.
const ANALYZE_ONCE = 'dist/analyze-once.mjs';
const built = spawnSync(process.execPath, ['bin/build.js'], { stdio: 'inherit' });
if (built.status !== 0) throw new Error('npm run build failed');

/** Peak RSS of a Node child measured from inside (process.resourceUsage, kilobytes). */
function earmarkRun(file: string, threads = 1): Promise<RunFigures> {
  return new Promise((resolve, reject) => {
    const started = performance.now();
    const child = spawn(process.execPath, [ANALYZE_ONCE, file, String(threads)], {
      stdio: ['ignore', 'pipe', 'inherit'],
    });
    let output = '';
    child.stdout.on('data', (chunk: Buffer) => {
      output += chunk.toString();
    });
    child.on('error', reject);
    child.on('exit', (code) => {
      const seconds = (performance.now() - started) / 1000;
      if (code !== 0) {
        reject(new Error(`analysis exited ${code}`));
        return;
      }
      const figures = JSON.parse(output) as { maxRssKb: number };
      resolve({ seconds, maxRssMb: figures.maxRssKb / 1024 });
    });
  });
}

const median = (values: number[]) => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)];

/** FLAC or MP3 made from the WAV by ffmpeg, once. */
async function encoded(wav: string, extension: 'flac' | 'mp3'): Promise<string> {
  const path = wav.replace(/\.wav$/, `.${extension}`);
  if (existsSync(path)) return path;
  const codec = extension === 'flac' ? ['-c:a', 'flac'] : ['-c:a', 'libmp3lame', '-b:a', '320k'];
  const partial = `${path}.partial.${extension}`;
  const done = spawnSync('ffmpeg', [
    '-nostdin',
    '-hide_banner',
    '-loglevel',
    'error',
    '-y',
    '-i',
    wav,
    ...codec,
    partial,
  ]);
  if (done.status !== 0) throw new Error(`ffmpeg could not encode ${extension}: ${done.stderr}`);
  await rename(partial, path);
  return path;
}

const row = (what: string, ours: string, reference: string, ratio: string, target: string) =>
  console.log(`${what.padEnd(44)} ${ours.padStart(12)} ${reference.padStart(14)} ${ratio.padStart(7)}   ${target}`);

async function main(): Promise<void> {
  const file = await benchFile(minutes);
  const { size } = await stat(file);
  const audioSeconds = minutes * 60;
  const hasFfmpeg = spawnSync('ffmpeg', ['-version']).status === 0;
  console.log(
    `file: ${file} (${(size / 2 ** 20).toFixed(0)} MiB, ${minutes} min); ${runs} alternating runs${hasFfmpeg ? ' beside ffmpeg' : ' (ffmpeg not on PATH)'}`,
  );
  const ours: RunFigures[] = [];
  const oursTwo: RunFigures[] = [];
  const theirs: RunFigures[] = [];
  for (let i = 0; i < runs; i++) {
    ours.push(await earmarkRun(file));
    oursTwo.push(await earmarkRun(file, 2));
    if (hasFfmpeg)
      theirs.push(
        await timed('ffmpeg', ['-nostdin', '-hide_banner', '-i', file, '-af', 'ebur128=peak=true', '-f', 'null', '-']),
      );
    console.log(
      `  run ${i + 1}: earmark ${ours[i].seconds.toFixed(2)} s, two threads ${oursTwo[i].seconds.toFixed(2)} s${hasFfmpeg ? `, ffmpeg ebur128 ${theirs[i].seconds.toFixed(2)} s` : ''}`,
    );
  }
  const oursSeconds = median(ours.map((r) => r.seconds));
  const twoSeconds = median(oursTwo.map((r) => r.seconds));
  const twoRss = Math.max(...oursTwo.map((r) => r.maxRssMb));
  const ffmpegSeconds = hasFfmpeg ? median(theirs.map((r) => r.seconds)) : Number.NaN;
  const peakRss = Math.max(...ours.map((r) => r.maxRssMb));

  // Peak RSS against duration: the median of RSS_RUNS runs per file, the files alternating (one
  // run's peak moves by a few MB with the garbage collector's timing, as much as the difference sought).
  const rssFiles: [string, string][] = [[`${minutes} min`, file]];
  for (const m of [shortMinutes, ...(longMinutes ? [longMinutes] : [])])
    if (m !== minutes) rssFiles.push([`${m} min`, await benchFile(m)]);
  if (surroundMinutes) rssFiles.push(['5.1', await benchFile(surroundMinutes, 6)]);
  const rssRuns = new Map<string, number[]>(rssFiles.map(([label]) => [label, []]));
  for (let i = 0; i < RSS_RUNS; i++) {
    for (const [label, path] of rssFiles) rssRuns.get(label)!.push((await earmarkRun(path)).maxRssMb);
  }
  const rssOf = (label: string) => median(rssRuns.get(label)!);
  console.log(
    `peak RSS, MB, ${RSS_RUNS} runs each: ${[...rssRuns].map(([label, v]) => `${label} ${v.map((x) => x.toFixed(1)).join(' / ')}`).join('; ')}`,
  );
  const rssByMinutes: [number, number][] = [[minutes, rssOf(`${minutes} min`)]];
  for (const m of [shortMinutes, ...(longMinutes ? [longMinutes] : [])])
    if (m !== minutes) rssByMinutes.push([m, rssOf(`${m} min`)]);
  const shortRss = rssByMinutes.find(([m]) => m === shortMinutes)?.[1] ?? peakRss;
  const surroundRss = surroundMinutes ? rssOf('5.1') : null;

  // Compressed input, from the short file: decode plus every meter, in x-realtime.
  const compressed: [string, number][] = [];
  if (hasFfmpeg) {
    const shortWav = await benchFile(shortMinutes);
    for (const extension of ['flac', 'mp3'] as const) {
      const path = await encoded(shortWav, extension);
      const figures = [await earmarkRun(path), await earmarkRun(path), await earmarkRun(path)];
      compressed.push([extension, (shortMinutes * 60) / median(figures.map((r) => r.seconds))]);
    }
    const wavShort = [await earmarkRun(shortWav), await earmarkRun(shortWav), await earmarkRun(shortWav)];
    compressed.unshift(['wav', (shortMinutes * 60) / median(wavShort.map((r) => r.seconds))]);
  }

  console.log('');
  row('target', 'earmark', 'reference', 'ratio', 'goal');
  row(
    `full analysis, one thread, ${minutes} min WAV (s)`,
    oursSeconds.toFixed(2),
    hasFfmpeg ? `${ffmpegSeconds.toFixed(2)} ffmpeg` : 'n/a',
    hasFfmpeg ? (oursSeconds / ffmpegSeconds).toFixed(3) : 'n/a',
    '<= 0.25 of ffmpeg ebur128=peak=true',
  );
  row(
    '  x realtime',
    `${(audioSeconds / oursSeconds).toFixed(0)}x`,
    hasFfmpeg ? `${(audioSeconds / ffmpegSeconds).toFixed(0)}x` : 'n/a',
    '',
    '',
  );
  row(
    `full analysis, two threads, ${minutes} min (s)`,
    twoSeconds.toFixed(2),
    hasFfmpeg ? `${ffmpegSeconds.toFixed(2)} ffmpeg` : 'n/a',
    hasFfmpeg ? (twoSeconds / ffmpegSeconds).toFixed(3) : 'n/a',
    '<= 0.15 of ffmpeg',
  );
  row('  x realtime', `${(audioSeconds / twoSeconds).toFixed(0)}x`, '', '', '');
  row(`peak RSS, ${minutes} min (MB)`, peakRss.toFixed(0), '100', (peakRss / 100).toFixed(2), '<= 1.00 of 100 MB');
  row(
    `peak RSS, ${minutes} min, two threads (MB)`,
    twoRss.toFixed(0),
    '100',
    (twoRss / 100).toFixed(2),
    '<= 1.00 of 100 MB',
  );
  for (const [m, rss] of rssByMinutes.slice(1).filter(([m]) => m !== shortMinutes)) {
    row(
      `peak RSS, ${m} min vs ${shortMinutes} min (MB)`,
      rss.toFixed(1),
      shortRss.toFixed(1),
      (rss / shortRss).toFixed(3),
      'within 10 %',
    );
  }
  if (surroundMinutes && surroundRss !== null)
    row(
      `peak RSS, 5.1 ${surroundMinutes} min vs stereo ${shortMinutes} min (MB)`,
      surroundRss.toFixed(1),
      shortRss.toFixed(1),
      (surroundRss / shortRss).toFixed(3),
      'within 10 %',
    );
  const longRss = rssOf(`${minutes} min`);
  if (minutes !== shortMinutes)
    row(
      `peak RSS, ${minutes} min vs ${shortMinutes} min (MB)`,
      longRss.toFixed(1),
      shortRss.toFixed(1),
      (longRss / shortRss).toFixed(3),
      'within 10 %',
    );
  for (const [extension, realtime] of compressed) {
    row(
      `${extension} decode + full analysis, ${shortMinutes} min`,
      `${realtime.toFixed(0)}x`,
      '',
      '',
      'x realtime, reported',
    );
  }
}

/**
 * A diagnostic beside the headline: what the two peak readings and the dropout meter cost per
 * audio minute, in this process, on 2 minutes of a brick-wall limited master (the case where
 * the exact pruning skips least).
 */
function meterCosts(): void {
  const seconds = 120;
  const info: StreamInfo = { sampleRate, channels: 2, channelLabels: ['L', 'R'] };
  const ceiling = 10 ** (-1 / 20);
  const blocks: PcmBlock[] = [...programmeBlocks({ sampleRate, channels: 2, seconds, seed: 7, levelDbfs: -16 })].map(
    (b) => ({
      frames: b.frames,
      channelData: b.channelData.map((x) => x.map((v) => Math.max(-ceiling, Math.min(ceiling, v * 4)))), // +12 dB into a hard limit at -1 dBFS
    }),
  );
  const meters: [string, () => Meter<unknown>][] = [
    ['true peak (BS.1770 Annex 2)', () => new TruePeakMeter(info)],
    ['reconstructed peak', () => new ReconstructedPeakMeter(info)],
    ['dropouts', () => new DropoutMeter(info)],
  ];
  console.log('');
  console.log(
    `meter cost on a limited master (diagnostic: ${seconds} s in memory, ms per audio minute, least of 7 alternating rounds)`,
  );
  const times = meters.map((): number[] => []);
  for (let round = 0; round < 7; round++) {
    meters.forEach(([, make], m) => {
      const meter = make();
      const started = performance.now();
      for (const block of blocks) meter.push(block);
      meter.result();
      times[m].push(performance.now() - started);
    });
  }
  meters.forEach(([name], m) =>
    console.log(`  ${name.padEnd(30)} ${((Math.min(...times[m]) * 60) / seconds).toFixed(1).padStart(7)}`),
  );
}

await main();
meterCosts();
