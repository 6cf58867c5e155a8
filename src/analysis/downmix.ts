// Fold-down readings, composed of the existing meters run on a mixed block:
// - 5.1 and wider: the stereo Lo/Ro downmix of ITU-R BS.775 (Lo = L + c C + s Ls, Ro = R + c C + s Rs,
//   LFE omitted unless a gain is given), through BS.1770 loudness, the Annex 2 true-peak meter, and
//   clip runs of the downmix at or over full scale.
// - Stereo: the mono sum M = L + R (no scaling: uncorrelated L and R read as loud as the stereo
//   pair, identical ones 3.01 LU louder, inverted ones fall silent), through BS.1770 loudness.
// - Optionally each channel alone through K-weighting and the gates (weight 1.0, LFE included).
//   These readings are not summable: BS.1770 gates after summing the channels' powers.
// Each costs a K-weighting pass per output channel, so the meter does nothing unless asked.

import type { ChannelLabel, Meter, PcmBlock, StreamInfo } from './audio.ts';
import { ClippingMeter } from './clipping.ts';
import { EnvelopeBuilder } from './envelope.ts';
import { byStart, EventLog, type EventList } from './events.ts';
import { LoudnessMeter } from './loudness.ts';
import { TruePeakMeter } from './true-peak.ts';
import { dbToAmplitude } from './units.ts';
import { EarmarkError } from '../errors/index.ts';

/** 1/sqrt(2) in dB (-3.01): ITU-R BS.775 Table 2 and ATSC A/52 section 7.8 clev = slev = -3 dB. */
export const DEFAULT_DOWNMIX_GAIN_DB = 20 * Math.log10(Math.SQRT1_2);

export interface DownmixOptions {
  /** Run the fold-down readings (extra K-weighting passes); off by default. */
  enabled?: boolean;
  /** Also read each channel's own integrated loudness (one more K-weighting pass per channel). */
  channelLoudness?: boolean;
  centreGainDb?: number;
  surroundGainDb?: number;
  /** LFE into both Lo and Ro at this gain; omitted (BS.775) when absent. */
  lfeGainDb?: number;
  /** Over events of the downmix's true peak are not kept; only its maximum. */
  maxEvents?: number;
}

export type DownmixKind = 'lo_ro' | 'mono_sum';

export interface DownmixGains {
  centreGainDb: number;
  surroundGainDb: number;
  lfeGainDb: number | null;
}

/** Events: 'downmix_clipping' (channel null: the run is in Lo or Ro, not in a file channel), by start. */
export interface DownmixResult extends EventList {
  enabled: boolean;
  /** Which fold-down was read; null when not asked or the layout has none. */
  kind: DownmixKind | null;
  /** Why there is no fold-down reading, in plain words; null when there is one. */
  note: string | null;
  gains: DownmixGains;
  integratedLufs: number | null;
  /** Lo/Ro only (null for the mono sum). */
  truePeakDbtp: number | null;
  truePeakAtSeconds: number | null;
  /** Lo/Ro only: runs of samples at or over full scale, per output [Lo, Ro]. */
  clipRuns: number;
  clippedSamples: number;
  longestClipRunSamples: number;
  /** Per file channel, each alone through K-weighting and the gates; null when not asked. Not summable. */
  channelIntegratedLufs: (number | null)[] | null;
}

const LEFT_SURROUNDS: readonly ChannelLabel[] = ['Ls', 'Lss', 'Lrs'];
const RIGHT_SURROUNDS: readonly ChannelLabel[] = ['Rs', 'Rss', 'Rrs'];

/** Per file channel, its gains into [Lo, Ro]; or why the layout has no Lo/Ro downmix. */
export function loRoMatrix(labels: readonly ChannelLabel[], gains: DownmixGains): [number, number][] | string {
  const c = dbToAmplitude(gains.centreGainDb);
  const s = dbToAmplitude(gains.surroundGainDb);
  const lfe = gains.lfeGainDb === null ? 0 : dbToAmplitude(gains.lfeGainDb);
  const unmapped: string[] = [];
  const matrix = labels.map((label): [number, number] => {
    if (label === 'L') return [1, 0];
    if (label === 'R') return [0, 1];
    if (label === 'C') return [c, c];
    if (label === 'LFE') return [lfe, lfe];
    if (LEFT_SURROUNDS.includes(label)) return [s, 0];
    if (RIGHT_SURROUNDS.includes(label)) return [0, s];
    unmapped.push(label);
    return [0, 0];
  });
  if (unmapped.length > 0) return `no downmix gain for channel roles ${[...new Set(unmapped)].join(', ')}`;
  const has = (wanted: readonly ChannelLabel[]) => labels.some((l) => wanted.includes(l));
  if (!has(['L']) || !has(['R']) || !has(['C']) || !has(LEFT_SURROUNDS) || !has(RIGHT_SURROUNDS))
    return 'the layout is not 5.0/5.1 or wider (L, R, C and a surround pair)';
  return matrix;
}

const isStereo = (labels: readonly ChannelLabel[]) => labels.length === 2 && labels[0] === 'L' && labels[1] === 'R';

function validGain(name: string, db: number | undefined, fallback: number): number {
  if (db === undefined) return fallback;
  if (!Number.isFinite(db) || db > 20 || db < -60)
    throw new EarmarkError('invalid_argument', `downmix ${name} must be a gain in dB from -60 to 20`, {
      field: `downmix.${name}`,
    });
  return db;
}

export class DownmixMeter implements Meter<DownmixResult> {
  private readonly enabled: boolean;
  private readonly kind: DownmixKind | null = null;
  private readonly note: string | null = null;
  private readonly gains: DownmixGains;
  /** Per output, the (file channel, gain) pairs summed into it. */
  private readonly mix: { channel: number; gain: number }[][] = [];
  private outputs: Float32Array[] = [];
  private readonly loudness: LoudnessMeter | null = null;
  private readonly truePeak: TruePeakMeter | null = null;
  private readonly clipping: ClippingMeter | null = null;
  private readonly envelopes = new EnvelopeBuilder();
  private readonly channelMeters: LoudnessMeter[] | null = null;
  private finished: DownmixResult | null = null;

  constructor(
    private readonly info: StreamInfo,
    options: DownmixOptions = {},
  ) {
    this.enabled = options.enabled === true;
    this.gains = {
      centreGainDb: validGain('centreGainDb', options.centreGainDb, DEFAULT_DOWNMIX_GAIN_DB),
      surroundGainDb: validGain('surroundGainDb', options.surroundGainDb, DEFAULT_DOWNMIX_GAIN_DB),
      lfeGainDb: options.lfeGainDb === undefined ? null : validGain('lfeGainDb', options.lfeGainDb, 0),
    };
    if (!this.enabled) return;
    const labels = info.channelLabels;
    const mono: StreamInfo = { sampleRate: info.sampleRate, channels: 1, channelLabels: ['M'] };
    if (options.channelLoudness) this.channelMeters = labels.map(() => new LoudnessMeter(mono));
    if (isStereo(labels)) {
      this.kind = 'mono_sum';
      this.mix = [
        [
          { channel: 0, gain: 1 },
          { channel: 1, gain: 1 },
        ],
      ];
      this.loudness = new LoudnessMeter(mono);
      return;
    }
    const matrix = loRoMatrix(labels, this.gains);
    if (typeof matrix === 'string') {
      this.note = labels.length <= 2 ? 'no fold-down for a mono or two-channel layout other than L/R' : matrix;
      return;
    }
    this.kind = 'lo_ro';
    this.mix = [0, 1].map((out) =>
      matrix.flatMap(([lo, ro], channel) => {
        const gain = out === 0 ? lo : ro;
        return gain === 0 ? [] : [{ channel, gain }];
      }),
    );
    const stereo: StreamInfo = {
      sampleRate: info.sampleRate,
      channels: 2,
      channelLabels: ['L', 'R'],
      ...(info.expectedFrames !== undefined ? { expectedFrames: info.expectedFrames } : {}),
    };
    this.loudness = new LoudnessMeter(stereo);
    this.truePeak = new TruePeakMeter(stereo, { maxEvents: 0 });
    // At or over full scale, one sample is a run: a fold-down sum over 1.0 clips on any fixed-point output.
    this.clipping = new ClippingMeter(stereo, { thresholdLinear: 1, minRunSamples: 1, maxEvents: options.maxEvents });
  }

  push(block: PcmBlock): void {
    if (!this.enabled) return;
    const frames = block.frames;
    if (this.channelMeters) {
      for (let c = 0; c < this.channelMeters.length; c++)
        this.channelMeters[c].push({ channelData: [block.channelData[c]], frames });
    }
    if (this.kind === null || frames === 0) return;
    // Grows to the largest block the decoder hands over, then is reused.
    if (this.outputs.length === 0 || this.outputs[0].length < frames)
      this.outputs = this.mix.map(() => new Float32Array(frames));
    for (let o = 0; o < this.mix.length; o++) {
      const y = this.outputs[o];
      const inputs = this.mix[o];
      // The first input sets the output, the rest add to it: no clearing pass.
      const first = block.channelData[inputs[0].channel],
        g0 = inputs[0].gain;
      for (let i = 0; i < frames; i++) y[i] = g0 * first[i];
      for (let k = 1; k < inputs.length; k++) {
        const x = block.channelData[inputs[k].channel],
          g = inputs[k].gain;
        for (let i = 0; i < frames; i++) y[i] += g * x[i];
      }
    }
    const mixed: PcmBlock = { channelData: this.outputs.map((y) => y.subarray(0, frames)), frames };
    this.loudness?.push(mixed);
    if (this.truePeak && this.clipping) {
      const shared: PcmBlock = { ...mixed, envelope: this.envelopes.build(mixed) };
      this.truePeak.push(shared);
      this.clipping.push(shared);
    }
  }

  result(): DownmixResult {
    if (this.finished) return this.finished;
    const peak = this.truePeak?.result();
    const clip = this.clipping?.result();
    const log = new EventLog(this.info.sampleRate, Number.MAX_SAFE_INTEGER);
    for (const e of clip?.events ?? []) log.add({ ...e, kind: 'downmix_clipping', channel: null });
    const events = log.list(byStart);
    this.finished = {
      enabled: this.enabled,
      kind: this.kind,
      note: this.enabled ? this.note : 'not asked for',
      gains: this.gains,
      integratedLufs: this.loudness?.result().integratedLufs ?? null,
      truePeakDbtp: peak?.truePeakDbtp ?? null,
      truePeakAtSeconds: peak?.truePeakAtSeconds ?? null,
      clipRuns: clip?.totalRuns ?? 0,
      clippedSamples: clip?.totalClippedSamples ?? 0,
      longestClipRunSamples: Math.max(0, ...(clip?.channels.map((c) => c.longestRunSamples) ?? [])),
      channelIntegratedLufs: this.channelMeters?.map((m) => m.result().integratedLufs) ?? null,
      ...events,
      // Counts of every run found, kept or not.
      eventsTotal: clip?.eventsTotal ?? 0,
      eventsTruncated: clip?.eventsTruncated ?? false,
      eventsByKind: clip && clip.eventsTotal > 0 ? { downmix_clipping: clip.eventsTotal } : {},
    };
    return this.finished;
  }
}
