// `npm run bench:decoders`: where compressed-input time goes. Per format, on a 10-minute 44.1 kHz
// stereo file encoded once with ffmpeg, runs alternating:
//   ours        openAudioFile, every block consumed, no analysis
//   raw         the format's decoder package on the whole file in one call (no slicing, no checks)
//   ffmpeg      `ffmpeg -i FILE -f null -` (decode alone)
//   ebur128     `ffmpeg -i FILE -af ebur128=peak=true -f null -` (the reference of the performance issue)
//   candidate:N decoders from outside the project (BENCH_DECODER_CANDIDATES, see decoder-formats.ts)
// and prints medians: wall seconds of the whole process (start-up included), the child's own decode
// seconds, its CPU seconds (start-up included; steadier than wall time on a shared machine), and
// wall time as a ratio to ffmpeg decode and to ebur128. Prints figures, never fails on them.
//
// Environment: BENCH_RUNS (default 5), BENCH_DIR (cache folder, default $TMPDIR/earmark-decoders),
// BENCH_MINUTES (default 10), BENCH_FORMATS (comma list, default all), BENCH_DECODER_CANDIDATES.
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, rename } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { BENCH_FORMATS, type BenchFormat, type Candidate, isBenchFormat, isCandidateList } from './decoder-formats.ts';

const runs = Number(process.env.BENCH_RUNS ?? 5);
const minutes = Number(process.env.BENCH_MINUTES ?? 10);
const cacheDir = process.env.BENCH_DIR ?? join(tmpdir(), 'earmark-decoders');
const formats = (process.env.BENCH_FORMATS?.split(',') ?? Object.keys(BENCH_FORMATS)).filter(isBenchFormat);

function run(command: string, args: string[]): { wallSeconds: number; stdout: string } {
  const started = performance.now();
  const r = spawnSync(command, args, { encoding: 'utf8', maxBuffer: 1 << 20 });
  const wallSeconds = (performance.now() - started) / 1000;
  if (r.status !== 0) throw new Error(`${command} ${args.join(' ')} exited ${r.status}: ${r.stderr.slice(-2000)}`);
  return { wallSeconds, stdout: r.stdout };
}

/** Pink noise under two tones, slowly swelling, the right channel a mix of the left: music-like density for the encoders. */
async function sourceFile(): Promise<string> {
  const path = join(cacheDir, `source-${minutes}min-44k1-stereo.wav`);
  if (existsSync(path)) return path;
  await mkdir(cacheDir, { recursive: true });
  const seconds = minutes * 60;
  const graph = `[0][1][2]amix=inputs=3:normalize=0,volume='0.6+0.35*sin(2*PI*t/7)':eval=frame,aformat=channel_layouts=stereo,aeval='val(0)|0.8*val(0)+0.05*sin(2*PI*440*t)'`;
  const partial = `${path}.partial.wav`;
  console.log(`generating ${path} (once) ...`);
  run('ffmpeg', [
    ...['-y', '-loglevel', 'error'],
    ...['-f', 'lavfi', '-i', `anoisesrc=c=pink:r=44100:a=0.15:d=${seconds}:seed=2026`],
    ...['-f', 'lavfi', '-i', `sine=f=220:r=44100:d=${seconds}`],
    ...['-f', 'lavfi', '-i', `sine=f=331:r=44100:d=${seconds}`],
    ...['-filter_complex', graph, '-ar', '44100', '-c:a', 'pcm_f32le', partial],
  ]);
  await rename(partial, path);
  return path;
}

async function encoded(format: BenchFormat, source: string): Promise<string> {
  const { file, encode } = BENCH_FORMATS[format];
  const path = join(cacheDir, `${minutes}min-${file}`);
  if (existsSync(path)) return path;
  const partial = join(cacheDir, `partial-${minutes}min-${file}`);
  run('ffmpeg', ['-y', '-loglevel', 'error', '-i', source, ...encode, partial]);
  await rename(partial, path);
  return path;
}

async function loadCandidates(): Promise<Candidate[]> {
  const modulePath = process.env.BENCH_DECODER_CANDIDATES;
  if (!modulePath) return [];
  const loaded: unknown = (await import(pathToFileURL(modulePath).href)).default;
  if (!isCandidateList(loaded)) throw new Error(`${modulePath} does not export a candidate list`);
  return loaded;
}

interface Sample {
  wallSeconds: number;
  decodeSeconds: number;
  cpuSeconds: number;
  frames: number;
  maxRssMb: number;
}

function parseChild(stdout: string): Omit<Sample, 'wallSeconds'> {
  const v: unknown = JSON.parse(stdout);
  if (typeof v !== 'object' || v === null) throw new Error(`bad child output: ${stdout}`);
  const get = (key: string): number => {
    const x: unknown = Reflect.get(v, key);
    if (typeof x !== 'number') throw new Error(`child output lacks ${key}: ${stdout}`);
    return x;
  };
  return {
    decodeSeconds: get('decodeSeconds'),
    cpuSeconds: get('cpuSeconds'),
    frames: get('frames'),
    maxRssMb: get('maxRssKb') / 1024,
  };
}

function measure(way: string, format: BenchFormat, path: string): Sample {
  if (way === 'ffmpeg' || way === 'ebur128') {
    const filter = way === 'ebur128' ? ['-af', 'ebur128=peak=true'] : [];
    const { wallSeconds } = run('ffmpeg', ['-nostats', '-loglevel', 'error', '-i', path, ...filter, '-f', 'null', '-']);
    return { wallSeconds, decodeSeconds: Number.NaN, cpuSeconds: Number.NaN, frames: Number.NaN, maxRssMb: Number.NaN };
  }
  const { wallSeconds, stdout } = run(process.execPath, ['bin/run.js', 'bench/decode-once.ts', way, format, path]);
  return { wallSeconds, ...parseChild(stdout) };
}

function median(values: number[]): number {
  const s = values.filter((v) => !Number.isNaN(v)).sort((a, b) => a - b);
  if (s.length === 0) return Number.NaN;
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

const fmt = (x: number, digits = 2): string => (Number.isNaN(x) ? '-' : x.toFixed(digits));

const source = await sourceFile();
const candidates = await loadCandidates();
console.log(`${runs} alternating runs per way, medians; ratios are wall time over ffmpeg's wall time on the same file`);
console.log('format  way                      wall s  decode s  cpu s  x ffmpeg  x ebur128  frames     rss MB');
for (const format of formats) {
  const path = await encoded(format, source);
  const ways = [
    'ours',
    'raw',
    'ffmpeg',
    'ebur128',
    ...candidates.filter((c) => c.formats.includes(format)).map((c) => `candidate:${c.name}`),
  ];
  const samples = new Map<string, Sample[]>(ways.map((w) => [w, []]));
  for (let i = 0; i < runs; i++) for (const way of ways) samples.get(way)?.push(measure(way, format, path));
  const wall = (way: string): number => median((samples.get(way) ?? []).map((s) => s.wallSeconds));
  for (const way of ways) {
    const s = samples.get(way) ?? [];
    const pick = (key: keyof Sample): number => median(s.map((x) => x[key]));
    console.log(
      [
        format.padEnd(7),
        way.padEnd(24),
        fmt(wall(way)).padStart(6),
        fmt(pick('decodeSeconds')).padStart(9),
        fmt(pick('cpuSeconds')).padStart(6),
        fmt(wall(way) / wall('ffmpeg')).padStart(9),
        fmt(wall(way) / wall('ebur128')).padStart(10),
        fmt(pick('frames'), 0).padStart(10),
        fmt(pick('maxRssMb'), 0).padStart(7),
      ].join(' '),
    );
  }
}
