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
  toleranceLu?: number;
  minLufs?: number;
  maxLufs?: number;
}
export interface TruePeakRule extends RuleBase { type: 'true-peak'; maxDbtp: number }
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

export type Rule =
  | IntegratedLoudnessRule | TruePeakRule | SamplePeakRule | LoudnessRangeRule | MomentaryMaxRule | ShortTermMaxRule
  | ClippingRule | SilenceGapRule | EdgeSilenceRule | DeadChannelRule | ChannelCopyRule | PhaseRule | DcOffsetRule
  | SampleRateRule | BitDepthRule | ChannelsRule | DurationRule | ContainerRule;

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
