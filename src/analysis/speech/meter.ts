// The speech meter: feeds the speech channel at 16 kHz to a speech classifier frame by frame and
// keeps one decision per frame (1 byte per 32 ms: 110 kB an hour). The classifier runs
// asynchronously (a WebAssembly model), so push only queues frames; the runner awaits settle()
// after each block, which keeps the queue to one block's frames.

import type { Meter, PcmBlock, StreamInfo } from '../audio.ts';
import { EarmarkError } from '../../errors/index.ts';
import { SPEECH_RATE_HZ, SpeechFeed, speechChannels } from './feed.ts';

/** A stateful speech classifier over one stream of 16 kHz mono frames (engine/speech-model.ts). */
export interface SpeechClassifier {
  /** The model's name and version, as the report shows it. */
  readonly name: string;
  /** Samples per frame at 16 kHz. */
  readonly frameSamples: number;
  /** The probability of speech in each frame of `frames` (whole frames, in stream order). */
  classify(frames: Float32Array): Promise<Float32Array>;
}

export interface SpeechOptions {
  /** Run the detector (a model inference per 32 ms); off by default. */
  enabled?: boolean;
  /** A frame is speech when the classifier's probability exceeds this. Default 0.5. */
  threshold?: number;
  /** Below this share of speech blocks the dialogue is not measurable. Default 10 %. */
  minimumSharePercent?: number;
}

export const DEFAULT_SPEECH_THRESHOLD = 0.5;
export const DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT = 10;

export interface SpeechResult {
  enabled: boolean;
  /** The classifier's name; null when not run. */
  detector: string | null;
  frameSeconds: number;
  threshold: number;
  minimumSharePercent: number;
  /** 1 where the frame is speech; frame i covers [i, i + 1) * frameSeconds. Empty when not run. */
  frameIsSpeech: Uint8Array;
}

export class SpeechMeter implements Meter<SpeechResult> {
  private readonly feed: SpeechFeed | null;
  private readonly frameSamples: number;
  private readonly threshold: number;
  /** Samples waiting for a whole frame, then whole frames waiting for the classifier. */
  private queue = new Float32Array(0);
  private queued = 0;
  private decisions = new Uint8Array(1024);
  private frames = 0;
  private settling: Promise<void> = Promise.resolve();

  constructor(
    info: StreamInfo,
    private readonly options: SpeechOptions = {},
    private readonly classifier: SpeechClassifier | null = null,
  ) {
    this.threshold = options.threshold ?? DEFAULT_SPEECH_THRESHOLD;
    if (!(this.threshold > 0 && this.threshold < 1))
      throw new EarmarkError('invalid_argument', 'speech threshold must lie between 0 and 1');
    if (options.enabled && !classifier)
      throw new EarmarkError('internal_error', 'the speech meter was asked for without a speech classifier');
    this.frameSamples = classifier?.frameSamples ?? 512;
    this.feed = options.enabled
      ? new SpeechFeed(info.sampleRate, speechChannels(info.channelLabels, info.channels))
      : null;
  }

  push(block: PcmBlock): void {
    this.feed?.push(block.channelData, block.frames, this.enqueue);
  }

  private readonly enqueue = (samples: Float32Array): void => {
    if (this.queue.length < this.queued + samples.length) {
      const bigger = new Float32Array(Math.max(2 * this.queue.length, this.queued + samples.length));
      bigger.set(this.queue.subarray(0, this.queued));
      this.queue = bigger;
    }
    this.queue.set(samples, this.queued);
    this.queued += samples.length;
  };

  /** Classifies the whole frames queued so far; calls made before the last one finished wait their turn. */
  settle(): Promise<void> {
    this.settling = this.settling.then(() => this.classifyQueued());
    return this.settling;
  }

  private async classifyQueued(): Promise<void> {
    const classifier = this.classifier;
    const whole = Math.floor(this.queued / this.frameSamples);
    if (!classifier || whole === 0) return;
    const probabilities = await classifier.classify(this.queue.subarray(0, whole * this.frameSamples));
    if (this.frames + whole > this.decisions.length) {
      const bigger = new Uint8Array(Math.max(2 * this.decisions.length, this.frames + whole));
      bigger.set(this.decisions.subarray(0, this.frames));
      this.decisions = bigger;
    }
    for (let i = 0; i < whole; i++) this.decisions[this.frames + i] = probabilities[i] > this.threshold ? 1 : 0;
    this.frames += whole;
    this.queue.copyWithin(0, whole * this.frameSamples, this.queued);
    this.queued -= whole * this.frameSamples;
  }

  /** The last part-frame (under 32 ms) is not classified: no gating block depends on it alone. */
  result(): SpeechResult {
    return {
      enabled: this.feed !== null,
      detector: this.feed ? (this.classifier?.name ?? null) : null,
      frameSeconds: this.frameSamples / SPEECH_RATE_HZ,
      threshold: this.threshold,
      minimumSharePercent: this.options.minimumSharePercent ?? DEFAULT_MINIMUM_SPEECH_SHARE_PERCENT,
      frameIsSpeech: this.decisions.slice(0, this.frames),
    };
  }
}
