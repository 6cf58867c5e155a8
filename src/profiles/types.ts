// Delivery profile shape (mirrors openapi/profile.schema.json; the schema is the authority on
// input, these types describe what parseProfile returns).

import type { ChannelLabel } from '../analysis/audio.ts';
import type { Container } from '../decode/types.ts';

export type Severity = 'fail' | 'warn';

export const FRAME_RATE_IDS = ['23.976', '24', '25', '29.97-df', '29.97-ndf', '30', '50', '59.94-df', '59.94-ndf', '60'] as const;
export type FrameRateId = (typeof FRAME_RATE_IDS)[number];

interface RuleBase {
  id: string;
  severity: Severity;
  /** Published clause or "house rule" / "common practice": shown beside the check. */
  source?: string;
}

export interface IntegratedLoudnessRule extends RuleBase {
  type: 'integrated-loudness';
  targetLufs?: number;
  /** Production tolerance (EBU R 128 item h). */
  toleranceLu?: number;
  /** Measurement tolerance added for QC (EBU R 128 item i): inside it, outside toleranceLu, the check is marginal (warn). */
  measurementToleranceLu?: number;
  minLufs?: number;
  maxLufs?: number;
}
/** annex2: the BS.1770-5 Annex 2 example filter (conformance); reconstructed: our band-limited reading, which does not under-read. */
export type TruePeakReading = 'annex2' | 'reconstructed';
export interface TruePeakRule extends RuleBase { type: 'true-peak'; maxDbtp: number; reading?: TruePeakReading }
export interface SamplePeakRule extends RuleBase { type: 'sample-peak'; maxDbfs: number }
export interface LoudnessRangeRule extends RuleBase { type: 'loudness-range'; minLu?: number; maxLu?: number }
export interface MomentaryMaxRule extends RuleBase { type: 'momentary-max'; maxLufs: number }
export interface ShortTermMaxRule extends RuleBase { type: 'short-term-max'; maxLufs: number }
export interface ClippingRule extends RuleBase { type: 'clipping'; maxRuns?: number; minRunSamples?: number; thresholdDbfs?: number }
export interface SilenceGapRule extends RuleBase { type: 'silence-gap'; maxSeconds: number; thresholdDbfs?: number }
export interface EdgeSilenceRule extends RuleBase { type: 'head-silence' | 'tail-silence'; minSeconds?: number; maxSeconds?: number; thresholdDbfs?: number }
export interface DeadChannelRule extends RuleBase { type: 'dead-channel' }
export interface ChannelCopyRule extends RuleBase { type: 'duplicate-channels' | 'inverted-channels' }
export interface PhaseRule extends RuleBase { type: 'phase'; minCorrelation?: number; maxWindows?: number }
export interface DcOffsetRule extends RuleBase { type: 'dc-offset'; maxDbfs: number }
export interface SampleRateRule extends RuleBase { type: 'sample-rate'; allowedHz: number[] }
export interface BitDepthRule extends RuleBase { type: 'bit-depth'; minBits: number }
export interface ChannelsRule extends RuleBase { type: 'channels'; count?: number; layout?: ChannelLabel[] }
export interface DurationRule extends RuleBase { type: 'duration'; minSeconds?: number; maxSeconds?: number }
export interface ContainerRule extends RuleBase { type: 'container'; allowed: Container[] }
/** Dropouts inside the programme; `channels` scopes the rule to channel roles (any channel when absent). */
export interface DropoutRule extends RuleBase { type: 'dropouts'; maxCount?: number; channels?: ChannelLabel[] }
/** The file itself: cut short, unreadable data, non-finite samples, no audio. Every profile has it
 * (fail when the profile does not name it); a profile may only lower it to warn. */
export interface IntegrityRule extends RuleBase { type: 'integrity' }

export type Rule =
  | IntegratedLoudnessRule | TruePeakRule | SamplePeakRule | LoudnessRangeRule | MomentaryMaxRule | ShortTermMaxRule
  | ClippingRule | SilenceGapRule | EdgeSilenceRule | DeadChannelRule | ChannelCopyRule | PhaseRule | DcOffsetRule
  | SampleRateRule | BitDepthRule | ChannelsRule | DurationRule | ContainerRule | DropoutRule | IntegrityRule;

export type RuleType = Rule['type'];

export interface Profile {
  id: string;
  name: string;
  version: string;
  description: string;
  /** The published specification the profile follows, or "house rule". */
  basis: string;
  timecode?: { frameRate: FrameRateId };
  rules: Rule[];
}

/** Clipping defaults: 3 samples within 0.01 dB of full scale (common practice, see analysis/clipping.ts). */
export const DEFAULT_MAX_CLIP_RUNS = 0;
export const DEFAULT_PHASE_MIN_CORRELATION = -0.5;
