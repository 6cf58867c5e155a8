// Checks decoder output against what the container declared and re-chunks it into fixed-size
// planar blocks. Decoders rarely throw on damaged input, so this is where damage becomes an error.
import type { PcmBlock } from '../analysis/audio.ts';
import { EarmarkError } from '../errors/index.ts';
import type { DecodeWarning } from './types.ts';
import type { CodecOutput } from './compressed-codecs.ts';
import type { Probe } from './compressed-probe.ts';
import { NonFiniteSamples } from './finite.ts';

/** +12 dBFS: lossy codecs overshoot 0 dBFS by a few dB at most; beyond this the decoder is reading garbage. */
const GARBAGE_PEAK = 3.98;

export class OutputCheck {
  framesOut = 0;
  /** The block being filled; null until the first frames after an emitted block arrive. */
  private pending: Float32Array[] | null = null;
  private filled = 0;
  private restoredWarned = false;
  private finalErrors: string[] = [];
  private readonly nonFinite = new NonFiniteSamples();

  constructor(
    private readonly probe: Probe,
    private readonly blockFrames: number,
    private readonly warnings: DecodeWarning[],
    /** Decoded-bytes cap for whole-file decoding; Infinity when streaming. */
    private readonly maxDecodedBytes: number,
    /** Cap on decoded frames for every file, checked before each output is taken. */
    private readonly maxFrames = Infinity,
    /** Arrays the consumer offers for the next block (DecodeOptions.blockArrays). */
    private readonly blockArrays?: () => readonly Float32Array[] | null,
  ) {
    this.flacScale = probe.encoding === 'flac' && probe.bitsPerSample ? 2 ** (probe.bitsPerSample - 1) : 0;
  }

  /** `final`: this output came from the last input bytes or the flush, where a cut file shows up. */
  *take(r: CodecOutput, final: boolean): Generator<PcmBlock> {
    const errors = r.errors ?? [];
    if (errors.length) {
      if (!final)
        throw new EarmarkError('corrupt_file', `decoder error inside the stream: ${errors[0].message}`, {
          atFrame: this.framesOut,
        });
      this.finalErrors.push(...errors.map((e) => e.message));
    }
    const data = r.channelData ?? [];
    const frames = Math.min(r.samplesDecoded ?? Infinity, data[0]?.length ?? 0);
    if (!data.length || frames <= 0) return;
    const channels = this.reconcile(data);
    this.checkRate(r.sampleRate);
    if (!r.withinFullScale) this.checkLevels(channels, frames);
    if ((this.framesOut + this.filled + frames) * this.probe.channels * 4 > this.maxDecodedBytes) {
      throw new EarmarkError('decoded_size_exceeded', `decoded audio exceeds the cap of ${this.maxDecodedBytes} bytes`);
    }
    if (this.framesOut + this.filled + frames > this.maxFrames) {
      throw new EarmarkError(
        'decoded_size_exceeded',
        `decoded audio exceeds the cap of ${this.maxFrames} frames (${(this.maxFrames / this.probe.sampleRate).toFixed(0)} s)`,
        { atFrame: this.framesOut + this.filled, maxDecodedFrames: this.maxFrames },
      );
    }
    for (let at = 0; at < frames; ) {
      const n = Math.min(frames - at, this.blockFrames - this.filled);
      const pending = (this.pending ??= this.nextArrays());
      for (let c = 0; c < channels.length; c++) {
        const from = channels[c].subarray(at, at + n);
        if (this.flacScale && !r.exactScale) requantizeInto(pending[c], this.filled, from, this.flacScale);
        else pending[c].set(from, this.filled);
      }
      this.filled += n;
      at += n;
      if (this.filled === this.blockFrames) yield this.emit();
    }
  }

  /** Last partial block, then the frame-count verdict. */
  *finish(): Generator<PcmBlock> {
    if (this.filled) yield this.emit();
    const nonFinite = this.nonFinite.warning();
    if (nonFinite) this.warnings.push(nonFinite);
    const { frames: declared, framesSlack: slack } = this.probe;
    if (this.framesOut === 0)
      throw new EarmarkError(
        'corrupt_file',
        `no audio could be decoded${this.finalErrors.length ? `: ${this.finalErrors[0]}` : ''}`,
      );
    const errorNote = this.finalErrors.length ? ` (${this.finalErrors[0]})` : '';
    if (declared !== null && this.framesOut < declared - slack) {
      // Decoders report errors on damaged frames but not on a clean cut; a container that says it is whole means frames went missing inside.
      if (this.finalErrors.length || this.probe.endMissing === false) {
        throw new EarmarkError(
          'corrupt_file',
          `only ${this.framesOut} of ${declared} declared frames decoded: frames are damaged or missing${errorNote}`,
          { atFrame: this.framesOut },
        );
      }
      this.warnings.push({
        code: 'truncated_data',
        atFrame: this.framesOut,
        message: `decoding stopped at frame ${this.framesOut} of ${declared} declared: the file is cut short`,
      });
    } else if (this.probe.endMissing) {
      this.warnings.push({
        code: 'truncated_data',
        atFrame: this.framesOut,
        message: `the container shows the file was cut after frame ${this.framesOut}`,
      });
    } else if (declared !== null && this.framesOut > declared + slack) {
      this.warnings.push({
        code: 'frames_mismatch',
        atFrame: declared,
        message: `decoded ${this.framesOut} frames, container declares ${declared}`,
      });
    } else if (this.finalErrors.length > 1 || (this.finalErrors.length && declared === null)) {
      // Without a declared length we cannot tell where the errors were: do not trust the output.
      throw new EarmarkError('corrupt_file', `decoder errors in the stream${errorNote}`, { atFrame: this.framesOut });
    } else if (this.finalErrors.length) {
      this.warnings.push({
        code: 'trailing_garbage',
        atFrame: this.framesOut,
        message: `decoder rejected bytes at the end${errorNote}`,
      });
    }
  }

  /** 2^(bits-1) for FLAC (see requantizeInto), 0 for other codecs. */
  private readonly flacScale: number;

  private emit(): PcmBlock {
    const pending = this.pending ?? [];
    const block: PcmBlock = { channelData: pending.map((c) => c.subarray(0, this.filled)), frames: this.filled };
    this.framesOut += this.filled;
    this.pending = null;
    this.filled = 0;
    return block;
  }

  /**
   * The consumer's arrays when it offers them: asked only once the emitted block has been taken
   * (the generator resumes after the consumer's next()), as the PCM streamer does. Else fresh
   * arrays per block: consumers may keep blocks, and decoder arrays may be reused views.
   */
  private nextArrays(): Float32Array[] {
    const offered = this.blockArrays?.();
    if (offered && offered.length === this.probe.channels && offered.every((a) => a.length >= this.blockFrames)) {
      return offered.map((a) => (a.length === this.blockFrames ? a : a.subarray(0, this.blockFrames)));
    }
    return Array.from({ length: this.probe.channels }, () => new Float32Array(this.blockFrames));
  }

  private reconcile(data: Float32Array[]): Float32Array[] {
    const want = this.probe.channels;
    if (data.length === want) return data;
    // mpg123 always outputs two channels; a mono MP3 header means one of them.
    if (want === 1 && data.length === 2 && this.probe.codec === 'mp3') return [data[0]];
    if (want === 2 && data.length === 1) {
      if (!this.restoredWarned) {
        this.restoredWarned = true;
        this.warnings.push({
          code: 'channels_restored',
          atFrame: this.framesOut + this.filled,
          message: 'decoder returned one channel for a two-channel stream; duplicated to restore dual mono',
        });
      }
      return [data[0], data[0]];
    }
    throw new EarmarkError('corrupt_file', `decoder produced ${data.length} channels, the container declares ${want}`);
  }

  private checkRate(rate: number): void {
    const declared = this.probe.sampleRate;
    if (!rate || rate === declared) return;
    if (this.probe.encoding === 'aac' && rate === 2 * declared) {
      throw new EarmarkError(
        'unsupported_encoding',
        `HE-AAC (SBR) decodes at ${rate} Hz but the container declares ${declared} Hz`,
      );
    }
    throw new EarmarkError('corrupt_file', `decoder output is ${rate} Hz, the container declares ${declared} Hz`);
  }

  /** Non-finite samples become 0 and one warning (the document reports them); many finite values far above full scale are damage. */
  private checkLevels(channels: Float32Array[], frames: number): void {
    let over = 0;
    const at = this.framesOut + this.filled;
    for (let c = 0; c < channels.length; c++) {
      const ch = channels[c];
      // A channel restored from the other is the same array: count its samples once.
      if (channels.indexOf(ch) !== c) continue;
      for (let i = 0; i < frames; i++) {
        const a = Math.abs(ch[i]);
        if (a <= GARBAGE_PEAK) continue;
        if (Number.isNaN(a) || a === Infinity) {
          ch[i] = 0;
          this.nonFinite.add(at + i);
          continue;
        }
        over++;
      }
    }
    // A handful of overs can be a real (if broken) master; many mean the decoder is reading noise.
    if (over > Math.max(8, 1e-4 * frames * channels.length)) {
      throw new EarmarkError(
        'corrupt_file',
        `decoded samples far above full scale (${over} over +12 dBFS): the stream is damaged`,
        { atFrame: this.framesOut + this.filled },
      );
    }
  }
}

/**
 * The FLAC decoder scales by 1/(2^(bits-1) - 1); recover the integer and use 1/2^(bits-1) so
 * output is bit-exact with the usual convention (and -full scale is -1.0, not below it). Writes
 * straight into the block: one pass over the samples, not a copy and then a second pass.
 */
export function requantizeInto(to: Float32Array, offset: number, from: Float32Array, scale: number): void {
  const up = scale - 1;
  for (let i = 0; i < from.length; i++) to[offset + i] = roundHalfUp(from[i] * up) / scale;
}

/**
 * Math.round(y), bit for bit. On decoded samples (each a hair above or below an integer, at random)
 * Math.round measured about 6x slower than Math.floor under Node 20, likely a mispredicted branch
 * inside it. When the computed |y - r| is under 1/4, r is the one integer within 1/2 of y, which is
 * Math.round(y); zero (whose sign Math.round keeps), halves, NaN and infinities fall back to it.
 */
function roundHalfUp(y: number): number {
  const r = Math.floor(y + 0.5);
  return Math.abs(y - r) < 0.25 && r !== 0 ? r : Math.round(y);
}
