// The speech detector: Silero VAD v5 (MIT), an ONNX model of 2.2 MB, run on one CPU thread by
// onnxruntime-node's bundled native build, or by onnxruntime-web's WebAssembly build where that
// does not load (2.3 times slower, same decisions). Nothing is fetched at install or run time. The
// model file comes from the @ricky0123/vad-web package, checked against its SHA-256 on load.
// Frames of 512 samples at 16 kHz (32 ms), each given with the last 64 samples before it as
// context, as the model's own Python wrapper does (from memory); the recurrent state carries over.
// The runtime is imported only when a dialogue reading is asked for.

import { createHash } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import type { InferenceSession, Tensor } from 'onnxruntime-web';
import type { SpeechClassifier } from '../analysis/speech/meter.ts';
import { SPEECH_RATE_HZ } from '../analysis/speech/feed.ts';
import { EarmarkError } from '../errors/index.ts';

export const SPEECH_MODEL_NAME = 'silero-vad-v5';
const MODEL_FILE = '@ricky0123/vad-web/dist/silero_vad_v5.onnx';
const MODEL_SHA256 = '2623a2953f6ff3d2c1e61740c6cdb7168133479b267dfef114a4a3cc5bdd788f';
const FRAME = 512;
const CONTEXT = 64;
const STATE_SIZE = 2 * 1 * 128;

interface Runtime {
  session: InferenceSession;
  Tensor: typeof Tensor;
  /** Which onnxruntime build runs it. */
  name: string;
}

let loading: Promise<Runtime> | null = null;
/** Runs on the one session go one at a time (several analyses may share a process). */
let running: Promise<unknown> = Promise.resolve();

async function load(): Promise<Runtime> {
  let model: Buffer;
  try {
    model = await readFile(createRequire(import.meta.url).resolve(MODEL_FILE));
  } catch (error) {
    throw new EarmarkError('speech_model_unavailable', `the speech model file is missing: ${String(error)}`);
  }
  const sha256 = createHash('sha256').update(model).digest('hex');
  if (sha256 !== MODEL_SHA256)
    throw new EarmarkError('speech_model_unavailable', `the speech model file is not the expected one (${sha256})`);
  const failures: string[] = [];
  for (const load of [nativeRuntime, webAssemblyRuntime]) {
    try {
      const { ort, sessionOptions, name } = await load();
      const session = await ort.InferenceSession.create(new Uint8Array(model), {
        intraOpNumThreads: 1,
        interOpNumThreads: 1,
        logSeverityLevel: 3,
        ...sessionOptions,
      });
      return { session, Tensor: ort.Tensor, name };
    } catch (error) {
      failures.push(String(error).split('\n')[0]);
    }
  }
  throw new EarmarkError('speech_model_unavailable', `the speech model did not load: ${failures.join('; ')}`);
}

type Ort = typeof import('onnxruntime-web');
interface Loaded {
  ort: Pick<Ort, 'InferenceSession' | 'Tensor'>;
  sessionOptions: InferenceSession.SessionOptions;
  name: string;
}

/** onnxruntime-node's bundled CPU build (its install script, which fetches GPU builds, is not run). */
async function nativeRuntime(): Promise<Loaded> {
  const ort = await import('onnxruntime-node');
  return { ort, sessionOptions: { executionProviders: ['cpu'] }, name: 'onnxruntime-node' };
}

/** onnxruntime-web's WebAssembly build, where the native one does not load (another libc or CPU). */
async function webAssemblyRuntime(): Promise<Loaded> {
  const ort = await import('onnxruntime-web');
  ort.env.wasm.numThreads = 1;
  ort.env.logLevel = 'error';
  return { ort, sessionOptions: { executionProviders: ['wasm'] }, name: 'onnxruntime-web' };
}

/** The shared runtime, loaded once per process; a failed load is tried again next time. */
export function speechRuntime(): Promise<Runtime> {
  loading ??= load().catch((error: unknown) => {
    loading = null;
    throw error;
  });
  return loading;
}

/** A classifier over one stream, with its own context and recurrent state. */
export function sileroClassifier(runtime: Runtime): SpeechClassifier {
  const { session, Tensor } = runtime;
  const sr = new Tensor('int64', BigInt64Array.from([BigInt(SPEECH_RATE_HZ)]), []);
  const input = new Float32Array(CONTEXT + FRAME);
  let state: Tensor = new Tensor('float32', new Float32Array(STATE_SIZE), [2, 1, 128]);
  async function classifyAll(frames: Float32Array): Promise<Float32Array> {
    const count = Math.floor(frames.length / FRAME);
    const out = new Float32Array(count);
    for (let f = 0; f < count; f++) {
      // The previous frame's last CONTEXT samples, then this frame.
      input.copyWithin(0, FRAME, FRAME + CONTEXT);
      input.set(frames.subarray(f * FRAME, (f + 1) * FRAME), CONTEXT);
      const result = await session.run({ input: new Tensor('float32', input, [1, CONTEXT + FRAME]), state, sr });
      const probability = result.output?.data;
      const next = result.stateN;
      if (!(probability instanceof Float32Array) || !next)
        throw new EarmarkError('speech_model_unavailable', 'the speech model gave no probability');
      out[f] = probability[0];
      state = next;
    }
    return out;
  }
  return {
    name: SPEECH_MODEL_NAME,
    frameSamples: FRAME,
    classify(frames) {
      const run = running.then(() => classifyAll(frames));
      running = run.catch(() => undefined);
      return run;
    },
  };
}
