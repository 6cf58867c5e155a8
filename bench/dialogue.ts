// `npm run bench:dialogue`: the dialogue-gated loudness as the product measures it (analyzeFile
// with the speech detector on, WAV files in a temp folder) against the dialogue corpus's known
// truth (fixtures/dialogue-corpus.ts; needs espeak-ng), then what the detector costs.
//   1. dialogue loudness error (ours - truth) per item, by speech-over-bed level and bed kind
//   2. speech share error in percentage points
//   3. false speech on music and noise alone, precision and recall per 400 ms gating block
//      (series.speech point k is gating block k, as truth.blockIsSpeech)
//   4. the detector's speed on one thread: audio seconds / (seconds with it - seconds without),
//      alternating runs on the corpus repeated to 10 and 30 minutes (48 kHz stereo 24-bit), medians;
//      the installed CLI too when it has `--dialogue`
//   5. peak RSS of a child process (dist/analyze-once.mjs, its own VmHWM) on the 10- and 30-minute files
// A benchmark, not a test: it prints figures and verdicts and never fails on them.
// Environment: BENCH_RUNS (default 3: alternating pairs per long file), BENCH_RSS_RUNS (default 3).

import { spawn, spawnSync } from 'node:child_process';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { buildCorpus, CORPUS_SAMPLE_RATE, type CorpusItem } from '../fixtures/dialogue-corpus.ts';
import { writeWavFile } from '../src/encode/wav.ts';
import { type AnalyzeFileOptions, analyzeFile } from '../src/engine/analyze-file.ts';
import { sileroClassifier, speechRuntime } from '../src/engine/speech-model.ts';

const runs = Number(process.env.BENCH_RUNS ?? 3);
const rssRuns = Number(process.env.BENCH_RSS_RUNS ?? 3);
const LONG_MINUTES = [10, 30];
// The targets of the dialogue-loudness work.
const DIALOGUE_TOLERANCE_LU = 1;
const DIALOGUE_TARGET_MIN_DB = 6;
const SHARE_TOLERANCE_POINTS = 10;
const FALSE_SPEECH_LIMIT_PERCENT = 5;
const DETECTOR_TARGET_X_REALTIME = 200;
// Our reading of "flat": the longer file's median peak at most this above the shorter file's
// highest run (one run's peak with the detector moves by 10-25 MiB with the collector's timing).
const FLAT_RSS_MIB = 5;

const plain: AnalyzeFileOptions = { hash: false, threads: 1 };
const withSpeech: AnalyzeFileOptions = { hash: false, threads: 1, analysis: { speech: { enabled: true } } };

const median = (values: number[]) => {
  const sorted = [...values].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
};
const fixed = (x: number | null | undefined, digits = 2) => (x === null || x === undefined ? '-' : x.toFixed(digits));
const verdict = (n: number, met: boolean, text: string) => console.log(`${n}. ${met ? 'MET    ' : 'NOT MET'} ${text}`);

interface Confusion {
  truePositive: number;
  falsePositive: number;
  falseNegative: number;
  trueNegative: number;
}

interface ItemReading {
  item: CorpusItem;
  dialogueLufs: number | null;
  sharePercent: number | null;
  note: string | null;
  blocks: Confusion;
  /** Series points against truth blocks, when they differ. */
  blockCountNote: string | null;
}

function confusion(ours: readonly number[], truth: readonly boolean[]): Confusion {
  const c = { truePositive: 0, falsePositive: 0, falseNegative: 0, trueNegative: 0 };
  for (let k = 0; k < Math.min(ours.length, truth.length); k++) {
    if (ours[k] === 1) truth[k] ? c.truePositive++ : c.falsePositive++;
    else truth[k] ? c.falseNegative++ : c.trueNegative++;
  }
  return c;
}

async function measureItem(item: CorpusItem, dir: string): Promise<ItemReading> {
  const path = join(dir, `${item.name}.wav`);
  const format = { sampleRate: CORPUS_SAMPLE_RATE, channels: 1, bitsPerSample: 32, float: true };
  await writeWavFile(path, format, [[item.mix]]);
  const doc = await analyzeFile(path, withSpeech);
  const isSpeech = doc.series.speech?.isSpeech ?? [];
  const truthBlocks = item.truth.blockIsSpeech.length;
  return {
    item,
    dialogueLufs: doc.dialogue.dialogueLufs,
    sharePercent: doc.dialogue.speechSharePercent,
    note: doc.dialogue.note,
    blocks: confusion(isSpeech, item.truth.blockIsSpeech),
    blockCountNote: isSpeech.length === truthBlocks ? null : `${isSpeech.length} series points, ${truthBlocks} blocks`,
  };
}

function accuracyTable(readings: ItemReading[]): void {
  const head = ['item', 'bed', 'over bed', 'truth LUFS', 'ours LUFS', 'error LU', 'truth %', 'ours %', 'error pp'];
  const widths = [30, 13, 8, 10, 9, 8, 7, 7, 8, 12, 12];
  const line = (cells: string[]) =>
    console.log(cells.map((c, i) => (i < 2 ? c.padEnd(widths[i]) : c.padStart(widths[i]))).join(' '));
  line([...head, 'false spch %', 'missed spch %']);
  for (const r of readings) {
    const t = r.item.truth;
    const b = r.blocks;
    const error = r.dialogueLufs !== null && t.dialogueLufs !== null ? r.dialogueLufs - t.dialogueLufs : null;
    const negatives = b.falsePositive + b.trueNegative;
    const positives = b.truePositive + b.falseNegative;
    line([
      r.item.name,
      r.item.bed,
      r.item.speechAboveBedDb === null ? '-' : `${r.item.speechAboveBedDb} dB`,
      fixed(t.dialogueLufs),
      fixed(r.dialogueLufs),
      error === null ? '-' : `${error >= 0 ? '+' : ''}${error.toFixed(2)}`,
      fixed(t.speechSharePercent, 1),
      fixed(r.sharePercent, 1),
      r.sharePercent === null ? '-' : (r.sharePercent - t.speechSharePercent).toFixed(1),
      negatives > 0 ? ((100 * b.falsePositive) / negatives).toFixed(1) : '-',
      positives > 0 ? ((100 * b.falseNegative) / positives).toFixed(1) : '-',
    ]);
    if (r.note) console.log(`${''.padEnd(widths[0])} note: ${r.note}`);
    if (r.blockCountNote) console.log(`${''.padEnd(widths[0])} ${r.blockCountNote}`);
  }
}

/** Dialogue loudness error of the items with speech over a bed, grouped as the target is. */
function dialogueVerdict(readings: ItemReading[]): void {
  const errors = readings.flatMap((r) => {
    const truth = r.item.truth.dialogueLufs;
    const level = r.item.speechAboveBedDb;
    return truth !== null && level !== null
      ? [{ r, level, error: r.dialogueLufs === null ? null : r.dialogueLufs - truth }]
      : [];
  });
  const describe = (list: typeof errors) =>
    list.map((e) => `${e.r.item.bed} ${e.error === null ? 'none' : `${e.error >= 0 ? '+' : ''}${e.error.toFixed(2)}`}`);
  console.log('dialogue loudness error, LU, by speech over bed:');
  for (const level of [...new Set(errors.map((e) => e.level))].sort((a, b) => a - b))
    console.log(`  ${String(level).padStart(2)} dB: ${describe(errors.filter((e) => e.level === level)).join(', ')}`);
  console.log('by bed kind (max |error|):');
  for (const bed of [...new Set(errors.map((e) => e.r.item.bed))]) {
    const list = errors.filter((e) => e.r.item.bed === bed);
    const worst = Math.max(...list.map((e) => (e.error === null ? Number.POSITIVE_INFINITY : Math.abs(e.error))));
    console.log(`  ${bed}: ${worst.toFixed(2)} LU over ${list.length} items`);
  }
  const judged = errors.filter((e) => e.level >= DIALOGUE_TARGET_MIN_DB);
  const worst = Math.max(...judged.map((e) => (e.error === null ? Number.POSITIVE_INFINITY : Math.abs(e.error))));
  const below = errors.filter((e) => e.level < DIALOGUE_TARGET_MIN_DB);
  verdict(
    1,
    worst <= DIALOGUE_TOLERANCE_LU,
    `dialogue loudness within ${DIALOGUE_TOLERANCE_LU} LU where speech is >= ${DIALOGUE_TARGET_MIN_DB} dB over the bed: max |error| ${worst.toFixed(2)} LU over ${judged.length} items (below that, no target: ${below.map((e) => `${e.level} dB ${describe([e])[0]}`).join(', ')})`,
  );
}

function shareAndBlockVerdicts(readings: ItemReading[]): void {
  const shareErrors = readings.map((r) => ({
    name: r.item.name,
    error: r.sharePercent === null ? Number.POSITIVE_INFINITY : r.sharePercent - r.item.truth.speechSharePercent,
  }));
  const worstShare = shareErrors.reduce((a, b) => (Math.abs(b.error) > Math.abs(a.error) ? b : a));
  verdict(
    2,
    Math.abs(worstShare.error) <= SHARE_TOLERANCE_POINTS,
    `speech share within ${SHARE_TOLERANCE_POINTS} points: max |error| ${Math.abs(worstShare.error).toFixed(1)} points (${worstShare.name})`,
  );
  const alone = readings.filter((r) => r.item.truth.speechBlockCount === 0);
  const falseShares = alone.map((r) => {
    const b = r.blocks;
    const all = b.truePositive + b.falsePositive + b.falseNegative + b.trueNegative;
    return { name: r.item.name, percent: (100 * b.falsePositive) / all };
  });
  const total = readings.reduce(
    (sum, r) => ({
      tp: sum.tp + r.blocks.truePositive,
      fp: sum.fp + r.blocks.falsePositive,
      fn: sum.fn + r.blocks.falseNegative,
    }),
    { tp: 0, fp: 0, fn: 0 },
  );
  const precision = (100 * total.tp) / (total.tp + total.fp);
  const recall = (100 * total.tp) / (total.tp + total.fn);
  verdict(
    3,
    falseShares.every((f) => f.percent < FALSE_SPEECH_LIMIT_PERCENT),
    `false speech under ${FALSE_SPEECH_LIMIT_PERCENT} % of blocks without speech: ${falseShares.map((f) => `${f.name} ${f.percent.toFixed(1)} %`).join(', ')}; over all items, per block, precision ${precision.toFixed(1)} %, recall ${recall.toFixed(1)} %`,
  );
}

/** The corpus mixes end to end, repeated to `minutes`, as 48 kHz stereo 24-bit (both channels the mix). */
async function longFile(items: CorpusItem[], minutes: number, dir: string): Promise<string> {
  const path = join(dir, `corpus-${minutes}min-48k-stereo-24bit.wav`);
  const totalFrames = minutes * 60 * CORPUS_SAMPLE_RATE;
  const blockFrames = 1 << 16;
  function* blocks(): Generator<Float32Array[]> {
    let written = 0;
    for (let i = 0; written < totalFrames; i = (i + 1) % items.length) {
      const mix = items[i].mix;
      for (let at = 0; at < mix.length && written < totalFrames; ) {
        const block = mix.subarray(at, at + Math.min(blockFrames, totalFrames - written, mix.length - at));
        yield [block, block];
        at += block.length;
        written += block.length;
      }
    }
  }
  await writeWavFile(path, { sampleRate: CORPUS_SAMPLE_RATE, channels: 2, bitsPerSample: 24, float: false }, blocks());
  return path;
}

/** The model alone on 60 s of 16 kHz frames (every third corpus sample: timing only), best of 3, x real time. */
async function modelAloneXRealtime(
  items: CorpusItem[],
): Promise<{ xRealtime: number; microsecondsPerFrame: number; runtime: string }> {
  const runtime = await speechRuntime();
  const classifier = sileroClassifier(runtime);
  const frames = new Float32Array(60 * 16000);
  const mix = items[0].mix;
  for (let i = 0; i < frames.length; i++) frames[i] = mix[(3 * i) % mix.length];
  let best = Number.POSITIVE_INFINITY;
  for (let r = 0; r < 3; r++) {
    const t = performance.now();
    await classifier.classify(frames);
    best = Math.min(best, (performance.now() - t) / 1000);
  }
  return {
    xRealtime: 60 / best,
    microsecondsPerFrame: (1e6 * best) / (frames.length / classifier.frameSamples),
    runtime: runtime.name,
  };
}

interface SpeedFigures {
  audioSeconds: number;
  without: number[];
  with: number[];
}

/** analyzeFile's own analysisSeconds, runs alternating (the order swaps each pair). */
async function speedInProcess(path: string, audioSeconds: number): Promise<SpeedFigures> {
  const figures: SpeedFigures = { audioSeconds, without: [], with: [] };
  for (let i = 0; i < runs; i++) {
    for (const speech of i % 2 === 0 ? [false, true] : [true, false]) {
      const doc = await analyzeFile(path, speech ? withSpeech : plain);
      (speech ? figures.with : figures.without).push(doc.analysisSeconds);
    }
  }
  return figures;
}

function speedLine(label: string, f: SpeedFigures): number {
  const differences = f.with.map((w, i) => w - f.without[i]);
  const detector = f.audioSeconds / median(differences);
  console.log(
    `${label.padEnd(34)} without ${fixed(median(f.without))} s (${(f.audioSeconds / median(f.without)).toFixed(0)}x)  with ${fixed(median(f.with))} s (${(f.audioSeconds / median(f.with)).toFixed(0)}x)  detector ${fixed(median(differences))} s -> ${detector.toFixed(0)}x real time   [runs without ${f.without.map((x) => x.toFixed(2)).join(' ')}; with ${f.with.map((x) => x.toFixed(2)).join(' ')}]`,
  );
  return detector;
}

function wallSeconds(
  command: string,
  args: string[],
): Promise<{ seconds: number; code: number | null; stdout: string }> {
  return new Promise((resolve, reject) => {
    const started = performance.now();
    const child = spawn(command, args, { stdio: ['ignore', 'pipe', 'ignore'] });
    let stdout = '';
    child.stdout.on('data', (chunk: Buffer) => {
      stdout += chunk.toString();
    });
    child.on('error', reject);
    child.on('exit', (code) => resolve({ seconds: (performance.now() - started) / 1000, code, stdout }));
  });
}

/** Whether the installed CLI reads `--dialogue` (added on another branch): it must run the detector. */
async function cliHasDialogueFlag(probe: string): Promise<boolean> {
  const run = await wallSeconds(process.execPath, [
    'bin/earmark.js',
    'analyze',
    probe,
    '--json',
    '--threads',
    '1',
    '--dialogue',
  ]);
  if (run.code !== 0) return false;
  try {
    const doc: unknown = JSON.parse(run.stdout);
    return (
      typeof doc === 'object' &&
      doc !== null &&
      'dialogue' in doc &&
      JSON.stringify(doc.dialogue).includes('"measured":true')
    );
  } catch {
    return false;
  }
}

async function speedCli(path: string, audioSeconds: number): Promise<SpeedFigures> {
  const figures: SpeedFigures = { audioSeconds, without: [], with: [] };
  const base = ['bin/earmark.js', 'analyze', path, '--json', '--threads', '1'];
  for (let i = 0; i < runs; i++) {
    for (const speech of i % 2 === 0 ? [false, true] : [true, false]) {
      const run = await wallSeconds(process.execPath, speech ? [...base, '--dialogue'] : base);
      if (run.code !== 0) throw new Error(`earmark analyze exited ${run.code}`);
      (speech ? figures.with : figures.without).push(run.seconds);
    }
  }
  return figures;
}

/** Peak RSS of one bundled analysis child, MiB. */
function childRssMib(path: string, speech: boolean): Promise<number> {
  const args = ['dist/analyze-once.mjs', path, '1', ...(speech ? ['speech'] : [])];
  return wallSeconds(process.execPath, args).then((run) => {
    if (run.code !== 0) throw new Error(`analyze-once exited ${run.code}`);
    // Its own high-water mark: maxRSS would count this (large) parent's pages at fork.
    const figures: { maxRssKb: number; ownPeakRssKb: number | null } = JSON.parse(run.stdout);
    return (figures.ownPeakRssKb ?? figures.maxRssKb) / 1024;
  });
}

async function main(): Promise<void> {
  const started = performance.now();
  const dir = await mkdtemp(join(tmpdir(), 'earmark-dialogue-'));
  try {
    const built = spawnSync(process.execPath, ['bin/build.js'], { stdio: 'inherit' });
    if (built.status !== 0) throw new Error('npm run build failed');
    console.log('building the dialogue corpus (espeak-ng) ...');
    const items = [...buildCorpus()];
    const corpusSeconds = items.reduce((sum, item) => sum + item.durationSeconds, 0);
    console.log(`${items.length} items, ${(corpusSeconds / 60).toFixed(1)} min; temp folder ${dir}\n`);

    const readings: ItemReading[] = [];
    for (const item of items) readings.push(await measureItem(item, dir));
    accuracyTable(readings);
    console.log('');
    dialogueVerdict(readings);
    shareAndBlockVerdicts(readings);

    console.log(`\nspeed, one thread, ${runs} alternating pairs, analyzeFile's analysisSeconds (no hashing):`);
    const files: [number, string][] = [];
    for (const minutes of LONG_MINUTES) files.push([minutes, await longFile(items, minutes, dir)]);
    const detectorSpeeds: number[] = [];
    for (const [minutes, path] of files)
      detectorSpeeds.push(speedLine(`analyzeFile, ${minutes} min`, await speedInProcess(path, minutes * 60)));
    const model = await modelAloneXRealtime(items);
    console.log(
      `the model alone (${model.runtime}, one 32 ms frame per run): ${model.xRealtime.toFixed(0)}x real time, ${model.microsecondsPerFrame.toFixed(0)} us per frame`,
    );
    const cliNote = (await cliHasDialogueFlag(join(dir, `${items[0].name}.wav`)))
      ? `installed CLI, 10 min: ${speedLine('earmark analyze --json --threads 1', await speedCli(files[0][1], LONG_MINUTES[0] * 60)).toFixed(0)}x`
      : 'the CLI on this checkout has no --dialogue: measured analyzeFile only';
    verdict(
      4,
      detectorSpeeds.every((x) => x >= DETECTOR_TARGET_X_REALTIME),
      `detector >= ${DETECTOR_TARGET_X_REALTIME}x real time on one thread: ${LONG_MINUTES.map((m, i) => `${m} min ${detectorSpeeds[i].toFixed(0)}x`).join(', ')} (${cliNote})`,
    );

    console.log(`\npeak RSS of a bundled analysis child (dist/analyze-once.mjs, one thread), median of ${rssRuns}:`);
    const rss = new Map<string, number[]>();
    for (let i = 0; i < rssRuns; i++)
      for (const [minutes, path] of files)
        for (const speech of [true, false]) {
          const key = `${minutes} min ${speech ? 'with speech' : 'without'}`;
          rss.set(key, [...(rss.get(key) ?? []), await childRssMib(path, speech)]);
        }
    for (const [key, values] of rss)
      console.log(
        `  ${key.padEnd(24)} ${median(values).toFixed(1)} MiB  [${values.map((v) => v.toFixed(1)).join(' ')}]`,
      );
    const runsOf = (key: string) => rss.get(key) ?? [];
    const [short, long] = LONG_MINUTES;
    const shortRuns = runsOf(`${short} min with speech`);
    const longMedian = median(runsOf(`${long} min with speech`));
    const growth = longMedian - median(shortRuns);
    const range = (values: number[]) => `${Math.min(...values).toFixed(1)}-${Math.max(...values).toFixed(1)}`;
    verdict(
      5,
      longMedian <= Math.max(...shortRuns) + FLAT_RSS_MIB,
      `memory flat with duration (${long}-min median within ${FLAT_RSS_MIB} MiB of the ${short}-min runs' highest): with speech ${short} min ${median(shortRuns).toFixed(1)} MiB (${range(shortRuns)}), ${long} min ${longMedian.toFixed(1)} MiB (${range(runsOf(`${long} min with speech`))}), ${growth >= 0 ? '+' : ''}${growth.toFixed(1)} MiB; the detector adds ${(median(shortRuns) - median(runsOf(`${short} min without`))).toFixed(1)} MiB at ${short} min`,
    );
    console.log(`\ntotal ${((performance.now() - started) / 1000).toFixed(0)} s`);
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

await main();
