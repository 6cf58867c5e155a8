// `npm run bench:service`: the service targets of the performance issue, measured on real
// processes over loopback against the local Redis (REDIS_URL, default redis://127.0.0.1:6379),
// under a private queue prefix and a temp storage folder, both removed at the end.
// A benchmark, not a test: it prints figures and never fails on them. Each row prints our figure,
// the reference and the ratio; the 1-minute load average is printed beside each measurement,
// since the machine's cores are shared.
//
// 1. Throughput: 200 one-minute 48 kHz stereo 24-bit WAVs (one generated file uploaded 200 times
//    by 4 lean clients; the jobs are independent) through one API and ONE worker process, first
//    submit to last report stored, against the single-thread analysis time per file the CLI
//    reports (median of BENCH_SERVICE_CLI_RUNS runs; decode and meters, without process start)
//    times 200. Goal: >= 1.8x. The CLI's wall time with its process start is shown beside it.
//    Then the worker alone (BENCH_SERVICE_PREFILLED=0 skips it): the jobs stored first, then one
//    worker started on them, first job start to last finish; first a worker held to one job and
//    one thread (the same path as one analysis thread, child warm after its first job), then the
//    default worker, and the CLI's analysis time again after both.
// 2. One long file (BENCH_SERVICE_LONG_MINUTES, 10) with an otherwise empty queue: the job's start
//    to finish against the same job on a worker held to one thread, alternating (the CLI on one
//    thread printed for scale). Then where a second thread pays at all: the CLI on one and two
//    threads for files of BENCH_SERVICE_SPLIT_MINUTES (1,3,10) minutes (MIN_THREADED_BYTES in
//    worker/thread-policy.ts).
// 3. Latency: sequential submits of a 30-second file with warm workers, polling every
//    BENCH_SERVICE_POLL_MS (5) until completed, then reading the report; p50 and p95, and the
//    medians of where the time goes (to the 202, queued, running, then seen and read).
// 4. Upload ingest (BENCH_SERVICE_INGEST=0 skips it): one large WAV (the 60-minute bench file,
//    ~989 MiB) and one smaller one (the 10-minute file, ~165 MiB) posted to /v1/jobs, each to a
//    fresh API process with no worker: MB/s from the start of the request to the 202 (Node's fetch,
//    then the same file from curl and from a lean Node client that streams the file into a
//    hand-written multipart body), and the API's VmHWM before and after.
//
// Environment: BENCH_DIR (cache folder, shared with bench/analysis.ts), BENCH_SERVICE_FILES (200),
// BENCH_SERVICE_CLI_RUNS (10), BENCH_SERVICE_LATENCY_RUNS (20), BENCH_SERVICE_LONG_RUNS (3),
// BENCH_SERVICE_SPLIT_RUNS (5); a count of 0 skips that part.

import { spawn, spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { createReadStream, existsSync, openAsBlob, statSync } from 'node:fs';
import { Agent as HttpAgent, request as httpRequest } from 'node:http';
import { mkdir, rename, stat } from 'node:fs/promises';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { writeWavFile } from '../src/encode/wav.ts';
import { programmeBlocks } from '../src/selftest/signals.ts';
import {
  peakRssMib,
  sleep,
  spawnService,
  startServiceProcesses,
  stopProcess,
  waitFor,
  type ServiceProcesses,
} from '../fixtures/procs.ts';

const redisUrl = process.env.REDIS_URL ?? 'redis://127.0.0.1:6379';
const cacheDir = process.env.BENCH_DIR ?? join(tmpdir(), 'earmark-bench');
const files = Number(process.env.BENCH_SERVICE_FILES ?? 200);
const cliRuns = Number(process.env.BENCH_SERVICE_CLI_RUNS ?? 10);
const latencyRuns = Number(process.env.BENCH_SERVICE_LATENCY_RUNS ?? 20);
const latencyPollMs = Number(process.env.BENCH_SERVICE_POLL_MS ?? 5);
const longRuns = Number(process.env.BENCH_SERVICE_LONG_RUNS ?? 3);
const longMinutes = Number(process.env.BENCH_SERVICE_LONG_MINUTES ?? 10);
const withIngest = process.env.BENCH_SERVICE_INGEST !== '0';
const withPrefilled = process.env.BENCH_SERVICE_PREFILLED !== '0';
const splitMinutes = (process.env.BENCH_SERVICE_SPLIT_MINUTES ?? '1,3,10').split(',').filter(Boolean).map(Number);
const splitRuns = Number(process.env.BENCH_SERVICE_SPLIT_RUNS ?? 5);
const sampleRate = 48000;
const basePrefix = `bsvc${randomBytes(4).toString('hex')}`;
const key = `bench-${randomBytes(12).toString('hex')}`;
const auth = { authorization: `Bearer ${key}` };

/** A deterministic programme WAV in the cache folder, generated once. */
async function wavFile(name: string, seconds: number): Promise<string> {
  const path = join(cacheDir, name);
  if (existsSync(path)) return path;
  await mkdir(cacheDir, { recursive: true });
  console.log(`generating ${path} (once) ...`);
  const partial = `${path}.partial`;
  const blocks = (function* () {
    for (const block of programmeBlocks({ sampleRate, channels: 2, seconds, seed: 2026, blockFrames: 1 << 16 }))
      yield block.channelData as Float32Array[];
  })();
  await writeWavFile(partial, { sampleRate, channels: 2, bitsPerSample: 24, float: false }, blocks);
  await rename(partial, path);
  return path;
}

type Service = ServiceProcesses;

function startService(prefix: string, workerCount: number, extraEnv: Record<string, string> = {}): Promise<Service> {
  return startServiceProcesses({
    redisUrl,
    prefix,
    workerCount,
    apiKeys: [{ key, tenant: 'bench', scopes: ['submit', 'read'] }],
    env: {
      EARMARK_RATE_LIMIT_PER_MINUTE: '1000000',
      EARMARK_LOG_LEVEL: 'warn',
      EARMARK_UPLOAD_LIMIT_BYTES: String(8 * 1024 ** 3),
      ...extraEnv,
    },
  });
}

async function submit(url: string, body: Blob, name: string): Promise<string> {
  const form = new FormData();
  form.set('profile', 'ebu-r128');
  form.set('file', body, name);
  const res = await fetch(`${url}/v1/jobs`, { method: 'POST', headers: auth, body: form });
  const reply = (await res.json()) as { id?: string };
  if (res.status !== 202 || !reply.id)
    throw new Error(`submit answered ${res.status}: ${JSON.stringify(reply).slice(0, 200)}`);
  return reply.id;
}

/**
 * The same submit with a lean client: the multipart body written by hand around the file, which
 * is streamed from disk to the socket (no Blob, no FormData encoder). Node's fetch spends about a
 * core per 130 MB/s building and sending a multipart body, and the client shares the two cores
 * with the API and the workers, so with fetch the throughput run measured the client.
 */
function submitFile(url: string, path: string, name: string): Promise<string> {
  const boundary = `----earmark-bench-${randomBytes(8).toString('hex')}`;
  const head = Buffer.from(
    `--${boundary}\r\nContent-Disposition: form-data; name="profile"\r\n\r\nebu-r128\r\n` +
      `--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="${name}"\r\nContent-Type: audio/wav\r\n\r\n`,
  );
  const tail = Buffer.from(`\r\n--${boundary}--\r\n`);
  const length = head.length + statSync(path).size + tail.length;
  return new Promise((resolve, reject) => {
    const req = httpRequest(
      `${url}/v1/jobs`,
      {
        method: 'POST',
        agent: keepAlive,
        headers: {
          ...auth,
          'content-type': `multipart/form-data; boundary=${boundary}`,
          'content-length': String(length),
        },
      },
      (res) => {
        let text = '';
        res
          .setEncoding('utf8')
          .on('data', (chunk: string) => {
            text += chunk;
          })
          .on('error', reject)
          .on('end', () => {
            const reply = JSON.parse(text) as { id?: string };
            if (res.statusCode !== 202 || !reply.id)
              reject(new Error(`submit answered ${res.statusCode}: ${text.slice(0, 200)}`));
            else resolve(reply.id);
          });
      },
    );
    req.on('error', reject);
    req.write(head);
    createReadStream(path, { highWaterMark: 1 << 20 })
      .on('error', reject)
      .on('end', () => req.end(tail))
      .pipe(req, { end: false });
  });
}
const keepAlive = new HttpAgent({ keepAlive: true, maxSockets: 8 });

interface View {
  state: string;
  createdAt: string;
  startedAt: string | null;
  finishedAt: string | null;
}
async function view(url: string, id: string): Promise<View> {
  const res = await fetch(`${url}/v1/jobs/${id}`, { headers: auth });
  if (res.status !== 200) throw new Error(`job view answered ${res.status}`);
  return (await res.json()) as View;
}
async function report(url: string, id: string): Promise<void> {
  const res = await fetch(`${url}/v1/jobs/${id}/report`, { headers: auth });
  if (res.status !== 200) throw new Error(`report answered ${res.status}`);
  await res.arrayBuffer();
}

/**
 * One CLI analysis process (bench/analyze-once.ts, bundled as the CLI runs after `npm run build`):
 * its wall time, and the analysis time it reports (decode and meters, without process start).
 */
function cliRunTimes(file: string, threads = 1): Promise<{ wallSeconds: number; analysisSeconds: number }> {
  return new Promise((resolve, reject) => {
    const started = performance.now();
    const child = spawn(process.execPath, ['dist/analyze-once.mjs', file, String(threads)], {
      stdio: ['ignore', 'pipe', 'inherit'],
    });
    let out = '';
    child.stdout.on('data', (chunk: Buffer) => {
      out += chunk.toString();
    });
    child.on('error', reject);
    child.on('exit', (code) => {
      if (code !== 0) return reject(new Error(`analysis exited ${code}`));
      const parsed: unknown = JSON.parse(out);
      const analysisSeconds =
        parsed && typeof parsed === 'object' && 'analysisSeconds' in parsed ? Number(parsed.analysisSeconds) : NaN;
      resolve({ wallSeconds: (performance.now() - started) / 1000, analysisSeconds });
    });
  });
}
const cliRun = async (file: string, threads = 1) => (await cliRunTimes(file, threads)).wallSeconds;

const percentile = (values: number[], p: number) => {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1))];
};
const median = (values: number[]) => percentile(values, 50);
const loadAverage = () => loadavg()[0].toFixed(2);

const rows: string[][] = [];
const row = (what: string, ours: string, reference: string, ratio: string, goal: string) =>
  rows.push([what, ours, reference, ratio, goal]);

/** Submits, then polls every `pollMs` until the job ends; its view. */
async function runJob(url: string, path: string, name: string, pollMs: number): Promise<View & { id: string }> {
  const id = await submitFile(url, path, name);
  for (;;) {
    const v = await view(url, id);
    if (v.state === 'completed') return { ...v, id };
    if (v.state === 'failed') throw new Error(`${name} failed`);
    await sleep(pollMs);
  }
}
const jobSeconds = (v: View) => (Date.parse(v.finishedAt ?? '') - Date.parse(v.startedAt ?? '')) / 1000;

/** Target 1: `files` one-minute WAVs through one worker process, first submit to last finished. */
async function throughput(
  service: Service,
  oneMinute: string,
  cli: { wallSeconds: number; analysisSeconds: number },
): Promise<void> {
  const started = Date.now();
  const t0 = performance.now();
  const ids: string[] = [];
  let next = 0;
  const client = async () => {
    while (next < files) {
      next += 1;
      ids.push(await submitFile(service.url, oneMinute, 'one-minute.wav'));
    }
  };
  await Promise.all(Array.from({ length: 4 }, client));
  const submitSeconds = (performance.now() - t0) / 1000;
  const pending = new Set(ids);
  let lastFinished = 0;
  let failed = 0;
  while (pending.size > 0) {
    await sleep(250);
    for (const id of [...pending]) {
      const v = await view(service.url, id);
      if (v.state === 'completed' || v.state === 'failed') {
        pending.delete(id);
        if (v.state === 'failed') failed += 1;
        lastFinished = Math.max(lastFinished, Date.parse(v.finishedAt ?? new Date().toISOString()));
      }
    }
  }
  await report(service.url, ids[ids.length - 1]);
  const wall = (lastFinished - started) / 1000;
  const reference = cli.analysisSeconds * files;
  const referenceWithStart = cli.wallSeconds * files;
  console.log(
    `throughput: ${files} jobs submitted in ${submitSeconds.toFixed(1)} s; last finished ${wall.toFixed(1)} s after the first submit; failed ${failed}; load ${loadAverage()}`,
  );
  row(
    `${files} x 1-min stereo WAV, one worker process (s)`,
    wall.toFixed(1),
    `${reference.toFixed(1)} analysis 1 thr`,
    `${(reference / wall).toFixed(2)}x`,
    '>= 1.8x',
  );
  row(
    '  the same against the CLI with its process start',
    wall.toFixed(1),
    `${referenceWithStart.toFixed(1)} CLI wall`,
    `${(referenceWithStart / wall).toFixed(2)}x`,
    'reported',
  );
}

/**
 * Target 1 for the worker alone: the uploads stored first (no worker running), then one worker
 * process started; its first job's start to its last job's finish, so ingest does not share the
 * cores with the analysis. Warm-up is not possible here, so the children's start is included.
 */
async function prefilled(
  oneMinute: string,
  tag: string,
  workerEnv: Record<string, string>,
): Promise<{ wall: number; line: string }> {
  const service = await startService(`${basePrefix}${tag}`, 0);
  try {
    const ids: string[] = [];
    let next = 0;
    const client = async () => {
      while (next < files) {
        next += 1;
        ids.push(await submitFile(service.url, oneMinute, 'one-minute.wav'));
      }
    };
    await Promise.all(Array.from({ length: 4 }, client));
    const worker = spawnService('worker', { ...service.env, ...workerEnv });
    try {
      const views = await waitFor(
        'the stored jobs',
        async () => {
          const vs = await Promise.all(ids.map((id) => view(service.url, id)));
          return vs.every((v) => v.state === 'completed' || v.state === 'failed') ? vs : null;
        },
        600_000,
        500,
      );
      const first = Math.min(...views.map((v) => Date.parse(v.startedAt ?? '')));
      const last = Math.max(...views.map((v) => Date.parse(v.finishedAt ?? '')));
      const wall = (last - first) / 1000;
      // Jobs running at once on average: 1 for one child, up to the worker's concurrency.
      const busy = views.reduce((sum, v) => sum + jobSeconds(v), 0);
      const line = `${files} stored jobs, first start to last finish ${wall.toFixed(1)} s; jobs running at once ${(busy / wall).toFixed(2)} on average, ${((busy / files) * 1000).toFixed(0)} ms per job; failed ${views.filter((v) => v.state === 'failed').length}; load ${loadAverage()}`;
      return { wall, line };
    } finally {
      await stopProcess(worker);
    }
  } finally {
    await service.close();
  }
}

/**
 * The worker's own throughput against one analysis thread on the same path: the same stored jobs
 * through a worker held to one job and one thread (EARMARK_WORKER_CONCURRENCY=1,
 * EARMARK_ANALYSIS_THREADS=1), then through the default worker; and against the CLI's analysis
 * time, taken again after both (the machine's speed drifts), the mean of the two medians.
 */
async function workerAlone(oneMinute: string, cli: { analysisSeconds: number }): Promise<void> {
  const one = await prefilled(oneMinute, 'p1', { EARMARK_WORKER_CONCURRENCY: '1', EARMARK_ANALYSIS_THREADS: '1' });
  console.log(`worker held to one thread: ${one.line}`);
  const ours = await prefilled(oneMinute, 'p', {});
  console.log(`worker alone: ${ours.line}`);
  const after = await cliAnalysisMedian(oneMinute);
  const reference = ((cli.analysisSeconds + after) / 2) * files;
  console.log(`CLI analysis median after them ${after.toFixed(3)} s`);
  row(
    `${files} x 1-min WAV stored first, then one worker (s)`,
    ours.wall.toFixed(1),
    `${one.wall.toFixed(1)} worker 1 thr`,
    `${(one.wall / ours.wall).toFixed(2)}x`,
    '>= 1.8x',
  );
  row(
    '  the same against the CLI analysis time',
    ours.wall.toFixed(1),
    `${reference.toFixed(1)} analysis 1 thr`,
    `${(reference / ours.wall).toFixed(2)}x`,
    'reported',
  );
}

/** Median of the CLI's reported single-thread analysis time over BENCH_SERVICE_CLI_RUNS runs. */
async function cliAnalysisMedian(file: string): Promise<number> {
  const analyses: number[] = [];
  for (let i = 0; i < cliRuns; i++) analyses.push((await cliRunTimes(file)).analysisSeconds);
  return median(analyses);
}

/**
 * Target 2: one long file, queue otherwise empty: the job's start to finish on this worker (which
 * may split it over threads) against the same job on a worker held to one thread
 * (EARMARK_ANALYSIS_THREADS=1, its child as warm), alternating; the CLI on one thread for scale.
 */
async function longFile(service: Service, long: string, minutes: number): Promise<void> {
  const single = await startService(`${basePrefix}t`, 1, { EARMARK_ANALYSIS_THREADS: '1' });
  try {
    await runJob(single.url, long, 'warm.wav', 20);
    const ours: number[] = [];
    const oneThread: number[] = [];
    const cli1: number[] = [];
    for (let i = 0; i < longRuns; i++) {
      oneThread.push(jobSeconds(await runJob(single.url, long, 'long.wav', 20)));
      ours.push(jobSeconds(await runJob(service.url, long, 'long.wav', 20)));
      cli1.push(await cliRun(long, 1));
    }
    const f = (xs: number[]) => xs.map((x) => x.toFixed(2)).join(' ');
    console.log(
      `long file (${minutes} min), ${longRuns} alternating runs, s: job ${f(ours)}; job on a one-thread worker ${f(oneThread)}; CLI 1 thread ${f(cli1)}; load ${loadAverage()}`,
    );
    row(
      `${minutes}-min WAV alone, job start to finish (s)`,
      median(ours).toFixed(2),
      `${median(oneThread).toFixed(2)} job 1 thr`,
      `${(median(oneThread) / median(ours)).toFixed(2)}x`,
      `> 1x (CLI 1 thr ${median(cli1).toFixed(2)} s)`,
    );
  } finally {
    await single.close();
  }
}

/**
 * Where a second thread pays (worker/thread-policy.ts MIN_THREADED_BYTES): the bundled analysis on
 * one and on two threads, alternating, for files of a few lengths. Process start is in both.
 */
async function threadSplit(): Promise<void> {
  for (const minutes of splitMinutes) {
    const file = await wavFile(`programme-${minutes}min-48k-stereo-24bit.wav`, minutes * 60);
    const one: number[] = [];
    const two: number[] = [];
    for (let i = 0; i < splitRuns; i++) {
      one.push(await cliRun(file, 1));
      two.push(await cliRun(file, 2));
    }
    const sizeMb = statSync(file).size / 1e6;
    console.log(
      `split: ${minutes} min (${sizeMb.toFixed(0)} MB), ${splitRuns} alternating runs, s: 1 thread ${one.map((x) => x.toFixed(3)).join(' ')}; 2 threads ${two.map((x) => x.toFixed(3)).join(' ')}; load ${loadAverage()}`,
    );
    row(
      `${minutes}-min WAV (${sizeMb.toFixed(0)} MB), CLI on 2 threads (s)`,
      median(two).toFixed(3),
      `${median(one).toFixed(3)} 1 thr`,
      `${(median(one) / median(two)).toFixed(2)}x`,
      'where > 1x, threads pay',
    );
  }
}

/** Target 3: sequential 30-second jobs, submit to report read. */
async function latency(service: Service, thirtySeconds: string): Promise<void> {
  const latencies: number[] = [];
  // Where the time goes, per job: to the 202, queued, running (worker's start to its commit), then seen and read.
  const parts: number[][] = [[], [], [], []];
  for (let i = 0; i < latencyRuns; i++) {
    const t = performance.now();
    const submitted = Date.now();
    const done = await runJob(service.url, thirtySeconds, 'thirty-seconds.wav', latencyPollMs);
    await report(service.url, done.id);
    latencies.push(performance.now() - t);
    const [created, startedAt, finished] = [done.createdAt, done.startedAt, done.finishedAt].map((x) =>
      Date.parse(x ?? ''),
    );
    parts[0].push(created - submitted);
    parts[1].push(startedAt - created);
    parts[2].push(finished - startedAt);
    parts[3].push(submitted + latencies[i] - finished);
  }
  console.log(
    `latency medians, ms: submit to job created ${median(parts[0])}, queued ${median(parts[1])}, running ${median(parts[2])}, finished to report read ${median(parts[3]).toFixed(0)}`,
  );
  const p50 = percentile(latencies, 50);
  const p95 = percentile(latencies, 95);
  console.log(
    `latency: ${latencyRuns} sequential 30-s jobs (polled every ${latencyPollMs} ms), ms: ${latencies.map((x) => x.toFixed(0)).join(' ')}; load ${loadAverage()}`,
  );
  row('submit-to-report, 30-s file, p50 (ms)', p50.toFixed(0), '150', (p50 / 150).toFixed(2), '<= 150 ms');
  row('submit-to-report, 30-s file, p95 (ms)', p95.toFixed(0), '', '', 'reported');
}

async function serviceTargets(oneMinute: string, thirtySeconds: string, long: string, minutes: number): Promise<void> {
  // Reference first, on an idle machine: the CLI over the same file, serially, one thread.
  await cliRun(oneMinute); // page cache warm
  const walls: number[] = [];
  const analyses: number[] = [];
  for (let i = 0; i < cliRuns; i++) {
    const t = await cliRunTimes(oneMinute);
    walls.push(t.wallSeconds);
    analyses.push(t.analysisSeconds);
  }
  const cli = { wallSeconds: median(walls), analysisSeconds: median(analyses) };
  console.log(
    `CLI: ${cliRuns} serial runs of bench/analyze-once.ts on the 1-minute file, one thread: analysis median ${cli.analysisSeconds.toFixed(3)} s (${analyses.map((x) => x.toFixed(3)).join(' ')}), process wall median ${cli.wallSeconds.toFixed(3)} s; load ${loadAverage()}`,
  );

  const service = await startService(basePrefix, 1);
  try {
    // Warm the worker's sandboxed children (two jobs at once) before the clock starts.
    const warm = await Promise.all([
      submitFile(service.url, oneMinute, 'warm.wav'),
      submitFile(service.url, oneMinute, 'warm.wav'),
    ]);
    await waitFor(
      'the warm-up jobs',
      async () => (await Promise.all(warm.map((id) => view(service.url, id)))).every((v) => v.state === 'completed'),
      120_000,
      100,
    );
    if (files > 0) await throughput(service, oneMinute, cli);
    if (latencyRuns > 0) await latency(service, thirtySeconds);
    if (longRuns > 0) await longFile(service, long, minutes);
    console.log(
      `peak RSS: API ${peakRssMib(service.api.pid)?.toFixed(0)} MiB, worker ${service.workers.map((w) => peakRssMib(w.pid)?.toFixed(0)).join(' / ')} MiB`,
    );
  } finally {
    await service.close();
  }
  if (files > 0 && withPrefilled) await workerAlone(oneMinute, cli);
}

interface Ingest {
  mbPerSecond: number;
  bytes: number;
  hwmBefore: number;
  hwmAfter: number;
  curlMbPerSecond: number | null;
  leanMbPerSecond: number;
  hwmAfterCurl: number;
}

/** The same upload from curl (a client that costs the shared cores less than fetch): seconds, or null without curl. */
function curlUpload(url: string, file: string): Promise<number | null> {
  return new Promise((resolve) => {
    const child = spawn(
      'curl',
      [
        '-s',
        '-o',
        '/dev/null',
        '-w',
        '%{http_code} %{time_total}',
        '-H',
        `authorization: ${auth.authorization}`,
        '-F',
        'profile=ebu-r128',
        '-F',
        `file=@${file};type=audio/wav`,
        `${url}/v1/jobs`,
      ],
      { stdio: ['ignore', 'pipe', 'ignore'] },
    );
    let out = '';
    child.stdout.on('data', (chunk: Buffer) => {
      out += chunk.toString();
    });
    child.on('error', () => resolve(null));
    child.on('exit', () => {
      const [code, seconds] = out.trim().split(' ');
      resolve(code === '202' ? Number(seconds) : null);
    });
  });
}

/** Uploads to a fresh API process with no worker (fetch, then curl): MB/s and the API's VmHWM before and after. */
async function ingest(file: string, suffix: string): Promise<Ingest> {
  const service = await startService(`${basePrefix}${suffix}`, 0);
  try {
    // A small upload first, so the "before" figure includes the upload path's own code and buffers.
    // (the first MiB of the file: a truncated WAV, which the API accepts and only the worker would reject).
    await submit(service.url, (await openAsBlob(file)).slice(0, 1 << 20), 'warm.wav').catch(() => undefined);
    await sleep(300);
    const hwmBefore = peakRssMib(service.api.pid) ?? NaN;
    const { size } = await stat(file);
    const blob = await openAsBlob(file);
    const t = performance.now();
    await submit(service.url, blob, 'large.wav');
    const seconds = (performance.now() - t) / 1000;
    const hwmAfter = peakRssMib(service.api.pid) ?? NaN;
    const curl = await curlUpload(service.url, file);
    const lean = performance.now();
    await submitFile(service.url, file, 'large.wav');
    const leanSeconds = (performance.now() - lean) / 1000;
    return {
      mbPerSecond: size / 1e6 / seconds,
      bytes: size,
      hwmBefore,
      hwmAfter,
      curlMbPerSecond: curl === null ? null : size / 1e6 / curl,
      leanMbPerSecond: size / 1e6 / leanSeconds,
      hwmAfterCurl: peakRssMib(service.api.pid) ?? NaN,
    };
  } finally {
    await service.close();
  }
}

async function main(): Promise<void> {
  console.log(`prefix ${basePrefix}*, Redis ${redisUrl}`);
  if (spawnSync(process.execPath, ['bin/build.js'], { stdio: 'inherit' }).status !== 0)
    throw new Error('npm run build failed');
  const oneMinute = await wavFile('programme-1min-48k-stereo-24bit.wav', 60);
  const thirtySeconds = await wavFile('programme-0.5min-48k-stereo-24bit.wav', 30);
  const long = await wavFile(`programme-${longMinutes}min-48k-stereo-24bit.wav`, longMinutes * 60);

  await serviceTargets(oneMinute, thirtySeconds, long, longMinutes);
  await threadSplit();
  if (withIngest) await ingestRows();
  printRows();
}

async function ingestRows(): Promise<void> {
  const mid = await wavFile('programme-10min-48k-stereo-24bit.wav', 600);
  const large = await wavFile('programme-60min-48k-stereo-24bit.wav', 3600);
  const small = await ingest(mid, 'm');
  const big = await ingest(large, 'l');
  for (const [label, r] of [
    ['small', small],
    ['large', big],
  ] as const) {
    console.log(
      `ingest ${label}: ${(r.bytes / 2 ** 20).toFixed(0)} MiB at ${r.mbPerSecond.toFixed(0)} MB/s from fetch; API VmHWM ${r.hwmBefore.toFixed(0)} -> ${r.hwmAfter.toFixed(0)} MiB (+${(r.hwmAfter - r.hwmBefore).toFixed(0)}); ` +
        `then from curl ${r.curlMbPerSecond === null ? 'n/a' : `${r.curlMbPerSecond.toFixed(0)} MB/s`}, from the lean Node client ${r.leanMbPerSecond.toFixed(0)} MB/s, VmHWM ${r.hwmAfterCurl.toFixed(0)} MiB`,
    );
  }
  if (big.curlMbPerSecond !== null)
    row(
      `upload ingest, ${(big.bytes / 2 ** 20).toFixed(0)} MiB WAV, curl client (MB/s)`,
      big.curlMbPerSecond.toFixed(0),
      '200',
      (big.curlMbPerSecond / 200).toFixed(2),
      '>= 200 MB/s',
    );
  row(
    `upload ingest, ${(big.bytes / 2 ** 20).toFixed(0)} MiB WAV, lean Node client (MB/s)`,
    big.leanMbPerSecond.toFixed(0),
    '200',
    (big.leanMbPerSecond / 200).toFixed(2),
    '>= 200 MB/s',
  );
  row(
    `upload ingest, ${(big.bytes / 2 ** 20).toFixed(0)} MiB WAV, fetch client (MB/s)`,
    big.mbPerSecond.toFixed(0),
    '200',
    (big.mbPerSecond / 200).toFixed(2),
    '>= 200 MB/s',
  );
  row(
    `upload ingest, ${(small.bytes / 2 ** 20).toFixed(0)} MiB WAV, fetch client (MB/s)`,
    small.mbPerSecond.toFixed(0),
    '200',
    (small.mbPerSecond / 200).toFixed(2),
    '>= 200 MB/s',
  );
  row(
    `API VmHWM increase, ${(big.bytes / 2 ** 20).toFixed(0)} vs ${(small.bytes / 2 ** 20).toFixed(0)} MiB upload (MiB)`,
    `+${(big.hwmAfter - big.hwmBefore).toFixed(0)}`,
    `+${(small.hwmAfter - small.hwmBefore).toFixed(0)}`,
    '',
    'not growing with size',
  );
}

function printRows(): void {
  console.log('');
  const widths = [58, 12, 22, 7];
  for (const r of [['target', 'earmark', 'reference', 'ratio', 'goal'], ...rows]) {
    console.log(
      `${r[0].padEnd(widths[0])} ${r[1].padStart(widths[1])} ${r[2].padStart(widths[2])} ${r[3].padStart(widths[3])}   ${r[4]}`,
    );
  }
}

await main();
