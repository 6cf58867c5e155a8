// `npm run bench` (first half; bench:service is the second): the commands a user runs,
// `npx earmark analyze <file> --json` and `npx earmark check <file> --profile delivery-online
// --json`, timed as whole processes (npx, start-up, decode, meters, hashing, report) beside
// `ffmpeg -af ebur128=peak=true` on the same file, runs alternating so all see the same machine
// load. Wall time and peak RSS (/usr/bin/time -v) per run; medians of per-run ratios per file,
// printed against the performance targets. The RSS of an npx run is that of the largest process
// in its tree, which is npm's own (about 90 MiB) when ours is smaller, so each run also starts
// `node bin/earmark.js analyze` directly (what npx runs) for the command's own peak RSS.
// A benchmark, not a test: it prints figures and never fails on them.
//
// Files: the paths given as arguments, else the target files, made once in the cache folder:
// 60 minutes 48 kHz/24-bit pink noise (sox); a 10-minute brick-wall limited master (stereo pink
// noise +12 dB into ffmpeg's alimiter, 1 ms attack, -1 dBFS); 10 minutes 44.1 kHz/16-bit; and
// that limited master encoded as FLAC 16-bit, MP3 320k, AAC 256k in M4A and ADTS, Opus 160k and
// Vorbis q6. BENCH_USER_RSS=1 adds the flatness files (3 hours stereo, 10 minutes 5.1).
// Environment: BENCH_USER_DIRS (the checkouts whose `npx earmark` runs, comma-separated, each
// after its own `npm ci`; default this one; several alternate within each run, e.g. before and
// after a change), BENCH_RUNS (default 5), BENCH_DIR (cache folder), BENCH_USER_FILES (a
// comma-separated subset of the target file names below).

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

/** A file in the cache folder, made once by `command` writing to the path it is given. */
async function cached(name: string, make: (partial: string) => [string, string[]]): Promise<string> {
  const path = join(cacheDir, name);
  if (existsSync(path)) return path;
  await mkdir(cacheDir, { recursive: true });
  console.log(`generating ${path} (once) ...`);
  const partial = join(cacheDir, `partial-${name}`);
  const [command, args] = make(partial);
  const made = spawnSync(command, args, { encoding: 'utf8' });
  if (made.status !== 0) throw new Error(`${command} could not make ${name}: ${made.stderr}`);
  await rename(partial, path);
  return path;
}

/** Pink noise from sox. */
const pinkWav = (name: string, seconds: number, sampleRate: number, bits: number, channels = 2) =>
  cached(name, (partial) => [
    'sox',
    [
      '-n',
      '-r',
      `${sampleRate}`,
      '-b',
      `${bits}`,
      '-c',
      `${channels}`,
      partial,
      'synth',
      `${seconds}`,
      'pinknoise',
      'vol',
      '0.3',
    ],
  ]);

const ffmpegQuiet = ['-nostdin', '-v', 'error', '-y'];

/** Stereo pink noise +12 dB into a 1 ms-attack limiter at -1 dBFS: every chunk sits at the ceiling. */
const limitedMaster = () =>
  cached('limited-10min-48k-24bit-stereo.wav', (partial) => [
    'ffmpeg',
    [
      ...ffmpegQuiet,
      ...['-f', 'lavfi', '-i', 'anoisesrc=c=pink:a=0.3:d=600:r=48000:seed=1'],
      ...['-f', 'lavfi', '-i', 'anoisesrc=c=pink:a=0.3:d=600:r=48000:seed=2'],
      '-filter_complex',
      '[0][1]join=inputs=2:channel_layout=stereo,volume=12dB,alimiter=limit=0.891:attack=1:release=50:level=false',
      ...['-c:a', 'pcm_s24le', '-f', 'wav', partial],
    ],
  ]);

/** The limited master encoded at 44.1 kHz: compressed input is what platforms ingest. */
const encoded = (name: string, source: string, codec: string[], format: string) =>
  cached(name, (partial) => [
    'ffmpeg',
    [...ffmpegQuiet, '-i', source, '-ar', '44100', ...codec, '-f', format, partial],
  ]);

interface Target {
  name: string;
  make: () => Promise<string>;
  /** The performance issue's ratio target for analyze, against ffmpeg's time. */
  goal: number;
}

function targets(): Target[] {
  const master = limitedMaster;
  const list: Target[] = [
    { name: '60-min 48k/24 WAV', make: () => pinkWav('pink-60min-48k-24bit-stereo.wav', 3600, 48000, 24), goal: 0.2 },
    { name: 'limited master WAV', make: master, goal: 0.35 },
    {
      name: '10-min 44.1k/16 WAV',
      make: () => pinkWav('pink-10min-44k1-16bit-stereo.wav', 600, 44100, 16),
      goal: 0.25,
    },
    {
      name: 'FLAC 16-bit',
      make: async () => encoded('limited-10min.flac', await master(), ['-c:a', 'flac', '-sample_fmt', 's16'], 'flac'),
      goal: 0.5,
    },
    {
      name: 'MP3 320k',
      make: async () => encoded('limited-10min.mp3', await master(), ['-c:a', 'libmp3lame', '-b:a', '320k'], 'mp3'),
      goal: 0.5,
    },
    {
      name: 'AAC in M4A',
      make: async () => encoded('limited-10min.m4a', await master(), ['-c:a', 'aac', '-b:a', '256k'], 'ipod'),
      goal: 0.5,
    },
    {
      name: 'AAC in ADTS',
      make: async () => encoded('limited-10min.aac', await master(), ['-c:a', 'aac', '-b:a', '256k'], 'adts'),
      goal: 0.5,
    },
    {
      name: 'Opus',
      // Opus runs at 48 kHz; the later -ar wins.
      make: async () =>
        encoded('limited-10min.opus', await master(), ['-ar', '48000', '-c:a', 'libopus', '-b:a', '160k'], 'ogg'),
      goal: 0.5,
    },
    {
      name: 'Vorbis',
      make: async () => encoded('limited-10min.ogg', await master(), ['-c:a', 'libvorbis', '-q:a', '6'], 'ogg'),
      goal: 0.5,
    },
  ];
  if (process.env.BENCH_USER_RSS === '1') {
    list.push(
      {
        name: '3-hour 48k/24 WAV',
        make: () => pinkWav('pink-180min-48k-24bit-stereo.wav', 10800, 48000, 24),
        goal: 0.2,
      },
      {
        name: '10-min 48k/24 5.1 WAV',
        make: () => pinkWav('pink-10min-48k-24bit-5.1.wav', 600, 48000, 24, 6),
        goal: 0.2,
      },
    );
  }
  const only = process.env.BENCH_USER_FILES?.split(',').map((n) => n.trim());
  return only ? list.filter((t) => only.includes(t.name)) : list;
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

/** Failed runs (exit 3 or above, or a crash), printed and counted; each is run again once. */
const failures: string[] = [];

async function timedOnce(command: string, args: string[], cwd: string): Promise<RunFigures> {
  try {
    return await timed(command, args, cwd);
  } catch (error) {
    const text = error instanceof Error ? error.message : String(error);
    failures.push(text.slice(0, 400));
    console.log(`  FAILED, run again: ${text.slice(0, 400)}`);
    return timed(command, args, cwd);
  }
}

const median = (values: number[]) => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)];

const figures = (r: RunFigures) => `${r.seconds.toFixed(2)} s ${r.peakRssMib.toFixed(0)} MiB`;

interface Row {
  name: string;
  ffmpegSeconds: number;
  analyzeRatio: number;
  checkRatio: number;
  goal: number;
  ownRssMib: number;
}

async function benchFile(target: Target, file: string): Promise<Row[]> {
  const analyze = checkouts.map((): RunFigures[] => []);
  const check = checkouts.map((): RunFigures[] => []);
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
  const profile = ['--profile', 'delivery-online', '--json'];
  for (let i = 0; i < runs; i++) {
    for (const [k, checkout] of checkouts.entries()) {
      analyze[k].push(await timedOnce('npx', ['earmark', 'analyze', file, '--json'], checkout));
      check[k].push(await timedOnce('npx', ['earmark', 'check', file, ...profile], checkout));
      direct[k].push(await timedOnce(process.execPath, ['bin/earmark.js', 'analyze', file, '--json'], checkout));
    }
    theirs.push(await timed('ffmpeg', ffmpegArgs, checkouts[0]));
    const mine = analyze.map(
      (runsOf, k) =>
        `earmark[${k}] analyze ${figures(runsOf[i])}, check ${figures(check[k][i])}, direct ${figures(direct[k][i])}`,
    );
    console.log(`  run ${i + 1}: ${mine.join('; ')}; ffmpeg ${figures(theirs[i])}`);
  }
  const ffmpegSeconds = median(theirs.map((r) => r.seconds));
  // Per-run ratios to the ffmpeg run beside them, then their median: load drifts between runs.
  const ratio = (runsOf: RunFigures[]) => median(runsOf.map((r, i) => r.seconds / theirs[i].seconds));
  return checkouts.map((_, k) => ({
    name: checkouts.length > 1 ? `${target.name} [${k}]` : target.name,
    ffmpegSeconds,
    analyzeRatio: ratio(analyze[k]),
    checkRatio: ratio(check[k]),
    goal: target.goal,
    ownRssMib: median(direct[k].map((r) => r.peakRssMib)),
  }));
}

function printTable(rows: Row[]): void {
  console.log('\n| file | ffmpeg | analyze ratio | goal | met | check ratio | check / analyze | own peak RSS |');
  console.log('|---|---|---|---|---|---|---|---|');
  for (const r of rows) {
    const cells = [
      r.name,
      `${r.ffmpegSeconds.toFixed(2)} s`,
      r.analyzeRatio.toFixed(3),
      `<= ${r.goal}`,
      r.analyzeRatio <= r.goal ? 'yes' : 'no',
      r.checkRatio.toFixed(3),
      `${(r.checkRatio / r.analyzeRatio).toFixed(3)}${Math.abs(r.checkRatio / r.analyzeRatio - 1) <= 0.1 ? '' : ' (over 10 %)'}`,
      `${r.ownRssMib.toFixed(0)} MiB${r.ownRssMib <= 100 ? '' : ' (over 100)'}`,
    ];
    console.log(`| ${cells.join(' | ')} |`);
  }
}

async function main(): Promise<void> {
  const paths = process.argv.slice(2).map((f) => resolve(f));
  const chosen: { target: Target; file: string }[] = [];
  if (paths.length > 0) {
    for (const file of paths) chosen.push({ target: { name: file, make: async () => file, goal: 0.5 }, file });
  } else {
    for (const target of targets()) chosen.push({ target, file: await target.make() });
  }
  for (const [k, checkout] of checkouts.entries()) {
    const bundled = existsSync(join(checkout, 'dist', 'earmark.mjs')) ? 'dist/ present' : 'no dist/';
    console.log(`earmark[${k}]: ${checkout} (${bundled})`);
  }
  console.log(`${runs} alternating runs per file`);
  const rows: Row[] = [];
  for (const { target, file } of chosen) {
    console.log(`${target.name}: ${file}`);
    rows.push(...(await benchFile(target, file)));
  }
  printTable(rows);
  console.log(`\nfailed runs: ${failures.length}`);
  for (const f of failures) console.log(`  ${f}`);
}

await main();
