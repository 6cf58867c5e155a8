// Delivery profile shape: the one source of the profile's JSON Schema. `npm run openapi` generates
// openapi/profile.schema.json from these declarations (profile-schema.ts; JSDoc tags become schema
// keywords, comments become descriptions), parseProfile validates with it, and a test checks the file
// is current.

import type { ChannelLabel } from '../analysis/audio.ts';
import type { LayoutName } from '../analysis/layouts.ts';
import { DEFAULT_PHASE_THRESHOLD } from '../analysis/channel-relations.ts';
import type { Container } from '../decode/types.ts';

export type Severity = 'fail' | 'warn';

export const FRAME_RATE_IDS = [
  '23.976',
  '24',
  '25',
  '29.97-df',
  '29.97-ndf',
  '30',
  '50',
  '59.94-df',
  '59.94-ndf',
  '60',
] as const;
export type FrameRateId = (typeof FRAME_RATE_IDS)[number];

/** @pattern ^[a-z0-9][a-z0-9-]{0,63}$ */
type Slug = string;

interface RuleBase {
  /** Unique within the profile; names the check in the report. */
  id: Slug;
  severity: Severity;
  /**
   * Published clause, or "house rule" / "common practice".
   * @maxLength 200
   */
  source?: string;
}

/** @minimum -70 @maximum 0 */
type Lufs = number;
/** @minimum -140 @maximum 0 */
type Dbfs = number;
/** @minimum -140 @maximum -20 */
type SilenceThresholdDbfs = number;
/** @minimum 0 @maximum 86400 */
type Seconds = number;
/** @minimum 0 @maximum 40 */
type LoudnessRangeLu = number;
/** @asType integer @minimum 0 */
type Count = number;

/**
 * Gated integrated loudness (ITU-R BS.1770): targetLufs with toleranceLu, or minLufs and/or maxLufs (targetLufs then only sets the correction).
 * @dependentRequired {"toleranceLu": ["targetLufs"], "measurementToleranceLu": ["toleranceLu"]}
 */
export interface IntegratedLoudnessRule extends RuleBase {
  type: 'integrated-loudness';
  targetLufs?: Lufs;
  /**
   * Production tolerance (EBU R 128 item h).
   * @minimum 0 @maximum 10
   */
  toleranceLu?: number;
  minLufs?: Lufs;
  maxLufs?: Lufs;
  /**
   * QC measurement tolerance added to toleranceLu (EBU R 128 item i): a reading inside it but outside toleranceLu is marginal (warn).
   * @minimum 0 @maximum 2
   */
  measurementToleranceLu?: number;
  /** Judge dialogue loudness instead of programme loudness when the programme has enough speech (runs the speech detector). */
  dialogueAnchor?: DialogueAnchor;
}
/** @minimum 1 @maximum 100 */
type SpeechSharePercent = number;
/** When speech fills at least minSpeechSharePercent of the programme's gating blocks, the rule judges the dialogue-gated loudness, with these limits where given (the rule's own otherwise); else the programme loudness. */
export interface DialogueAnchor {
  minSpeechSharePercent: SpeechSharePercent;
  /** @minimum 0 @maximum 10 */
  toleranceLu?: number;
  minLufs?: Lufs;
  maxLufs?: Lufs;
}
/** annex2: the BS.1770-5 Annex 2 example filter (conformance); reconstructed: our band-limited reading, which does not under-read. */
export type TruePeakReading = 'annex2' | 'reconstructed';
/** Maximum true peak: the BS.1770-5 Annex 2 reading, or the reconstructed (band-limited) peak. */
export interface TruePeakRule extends RuleBase {
  type: 'true-peak';
  /** @minimum -60 @maximum 6 */
  maxDbtp: number;
  /** Which reading is judged: annex2 (BS.1770-5 Annex 2 example filter, default) or reconstructed (band-limited reconstruction, within 0.05 dB). */
  reading?: TruePeakReading;
}
/** Maximum sample peak. */
export interface SamplePeakRule extends RuleBase {
  type: 'sample-peak';
  maxDbfs: Dbfs;
}
/** Loudness range (EBU Tech 3342), minLu and/or maxLu. */
export interface LoudnessRangeRule extends RuleBase {
  type: 'loudness-range';
  minLu?: LoudnessRangeLu;
  maxLu?: LoudnessRangeLu;
}
/** Maximum momentary loudness (400 ms). */
export interface MomentaryMaxRule extends RuleBase {
  type: 'momentary-max';
  maxLufs: Lufs;
}
/** Maximum short-term loudness (3 s). */
export interface ShortTermMaxRule extends RuleBase {
  type: 'short-term-max';
  maxLufs: Lufs;
}
/** Clipping runs: at most maxRuns (default 0) runs of minRunSamples (default 3) samples at or above thresholdDbfs (default -0.01). */
export interface ClippingRule extends RuleBase {
  type: 'clipping';
  maxRuns?: Count;
  /** @asType integer @minimum 1 @maximum 1000 */
  minRunSamples?: number;
  /** @minimum -6 @maximum 0 */
  thresholdDbfs?: number;
}
/** Longest all-channel silence inside the programme (signal on both sides). Below 0.1 s a gap is a pause, not a drop-out. */
export interface SilenceGapRule extends RuleBase {
  type: 'silence-gap';
  /** @minimum 0.1 @maximum 86400 */
  maxSeconds: number;
  thresholdDbfs?: SilenceThresholdDbfs;
}
/** Silence before the first / after the last signal: minSeconds (a required lead-in) and/or maxSeconds. */
export interface EdgeSilenceRule extends RuleBase {
  type: 'head-silence' | 'tail-silence';
  minSeconds?: Seconds;
  maxSeconds?: Seconds;
  thresholdDbfs?: SilenceThresholdDbfs;
}
/** No channel may be digital silence throughout. */
export interface DeadChannelRule extends RuleBase {
  type: 'dead-channel';
}
/** No channel may be an exact or near copy (duplicate) or polarity-inverted copy (inverted) of another. */
export interface ChannelCopyRule extends RuleBase {
  type: 'duplicate-channels' | 'inverted-channels';
}
/** Windows (3 s) with inter-channel correlation below minCorrelation (default -0.5): at most maxWindows (default 0). */
export interface PhaseRule extends RuleBase {
  type: 'phase';
  /** @minimum -1 @maximum 1 */
  minCorrelation?: number;
  maxWindows?: Count;
}
/** Largest per-channel DC offset (mean sample value) in dBFS. */
export interface DcOffsetRule extends RuleBase {
  type: 'dc-offset';
  maxDbfs: Dbfs;
}
/** @asType integer @minimum 1 @maximum 768000 */
type SampleRateHz = number;
/** Allowed sample rates. */
export interface SampleRateRule extends RuleBase {
  type: 'sample-rate';
  /** @minItems 1 @uniqueItems true */
  allowedHz: SampleRateHz[];
}
/** Minimum stored bits per sample; lossy encodings have none and fail. */
export interface BitDepthRule extends RuleBase {
  type: 'bit-depth';
  /** @asType integer @minimum 8 @maximum 64 */
  minBits: number;
}
/** Channel count and/or exact channel layout (labels in order). */
export interface ChannelsRule extends RuleBase {
  type: 'channels';
  /** @asType integer @minimum 1 @maximum 64 */
  count?: number;
  /** @minItems 1 @maxItems 64 */
  layout?: ChannelLabel[];
}
/** Programme duration, minSeconds and/or maxSeconds. */
export interface DurationRule extends RuleBase {
  type: 'duration';
  minSeconds?: Seconds;
  maxSeconds?: Seconds;
}
/** Allowed containers. */
export interface ContainerRule extends RuleBase {
  type: 'container';
  /** @minItems 1 @uniqueItems true */
  allowed: Container[];
}
/** Dropouts inside the programme: digital-zero runs and sudden drops to near silence, per channel or in all channels. */
export interface DropoutRule extends RuleBase {
  type: 'dropouts';
  /**
   * Dropouts allowed (default 0).
   * @asType integer @minimum 0 @maximum 100000
   */
  maxCount?: number;
  /**
   * Channel roles the rule judges; all channels when absent. All-channel dropouts always count.
   * @minItems 1 @maxItems 32 @uniqueItems true
   */
  channels?: ChannelLabel[];
}
/** Integrated loudness (ITU-R BS.1770) of the Lo/Ro downmix (ITU-R BS.775) of a 5.0/5.1-or-wider file: targetLufs with toleranceLu. Other layouts: not applied. */
export interface DownmixLoudnessRule extends RuleBase {
  type: 'downmix-loudness';
  targetLufs: Lufs;
  /** @minimum 0 @maximum 10 */
  toleranceLu: number;
}
/** Maximum true peak (ITU-R BS.1770-5 Annex 2) of the Lo/Ro downmix of a 5.0/5.1-or-wider file. Other layouts: not applied. */
export interface DownmixTruePeakRule extends RuleBase {
  type: 'downmix-true-peak';
  /** @minimum -60 @maximum 6 */
  maxDbtp: number;
}
/** Runs of Lo/Ro downmix samples at or over full scale: at most maxRuns (default 0). Other layouts: not applied. */
export interface DownmixClippingRule extends RuleBase {
  type: 'downmix-clipping';
  maxRuns?: Count;
}
/** Stereo only: the mono sum L + R may be at most maxLossLu quieter than the stereo programme (BS.1770 integrated loudness). A sum that cancels to silence fails. */
export interface MonoCompatibilityRule extends RuleBase {
  type: 'mono-compatibility';
  /** @minimum 0 @maximum 40 */
  maxLossLu: number;
}
/**
 * Line-up tone before the programme (analysis/head.ts): required (default) or forbidden. When required,
 * every tone segment is judged against frequencyHz, levelDbfs (the AES17 reading: a sine's peak) and minSeconds.
 * @dependentRequired {"frequencyToleranceHz": ["frequencyHz"], "levelToleranceDb": ["levelDbfs"]}
 */
export interface LineUpToneRule extends RuleBase {
  type: 'line-up-tone';
  presence?: 'required' | 'forbidden';
  /** @minimum 20 @maximum 20000 */
  frequencyHz?: number;
  /**
   * Default 1 Hz.
   * @minimum 0 @maximum 1000
   */
  frequencyToleranceHz?: number;
  levelDbfs?: Dbfs;
  /**
   * Default 0.5 dB.
   * @minimum 0 @maximum 10
   */
  levelToleranceDb?: number;
  /** Shortest tone accepted (the longest segment is judged). */
  minSeconds?: Seconds;
  /**
   * Channel roles whose tone is judged for frequency and level (e.g. not the LFE's); all when absent.
   * @minItems 1 @maxItems 32 @uniqueItems true
   */
  channels?: ChannelLabel[];
}
/** The line-up tone ends in silence before the programme: at least minGapSeconds (default 0.1 s) between its end and the programme start. */
export interface ToneSeparationRule extends RuleBase {
  type: 'tone-separation';
  /** @minimum 0 @maximum 60 */
  minGapSeconds?: number;
}
/**
 * A sync pop (one frame of tone): at the head, offsetSeconds (default 2) before the programme start, or at a
 * timecode; at the tail, offsetSeconds after the programme's last sound. Within toleranceFrames (default 1) at
 * the report's frame rate.
 */
export interface SyncPopRule extends RuleBase {
  type: 'sync-pop';
  /** head (default) or tail. */
  position?: 'head' | 'tail';
  /** @minimum 0 @maximum 60 */
  offsetSeconds?: number;
  /**
   * The pop's first frame as SMPTE timecode (with the file's BWF time reference); wins over offsetSeconds.
   * @pattern ^[0-2][0-9]:[0-5][0-9]:[0-5][0-9][:;][0-5][0-9]$
   */
  atTimecode?: string;
  /** @asType integer @minimum 0 @maximum 30 */
  toleranceFrames?: number;
}
/** The file itself: cut short, unreadable data, a declared length not reached, non-finite samples, no audio. Fails under every profile; name this rule only to lower it to warn. */
export interface IntegrityRule extends RuleBase {
  type: 'integrity';
}

/** @minimum 0 @maximum 10 */
type DeclaredToleranceLu = number;
/**
 * Loudness the file's metadata declares (BWF bext v2, iXML LOUDNESS) must match the readings of
 * the same quantities. A file that declares nothing passes unless requireDeclared.
 */
export interface DeclaredLoudnessRule extends RuleBase {
  type: 'declared-loudness';
  /** Largest |measured - declared| integrated loudness (default 0.2 LU: EBU R 128 item i's QC tolerance, our choice). */
  integratedToleranceLu?: DeclaredToleranceLu;
  /** Loudness range (default 1 LU: EBU Tech 3342's meter tolerance, our choice). */
  loudnessRangeToleranceLu?: DeclaredToleranceLu;
  /** Max true peak, in dB (default 0.4 dB: the wider side of EBU Tech 3341's true-peak tolerance, our choice). */
  truePeakToleranceDb?: DeclaredToleranceLu;
  /** Max momentary loudness (default 0.2 LU, our choice). */
  maxMomentaryToleranceLu?: DeclaredToleranceLu;
  /** Max short-term loudness (default 0.2 LU, our choice). */
  maxShortTermToleranceLu?: DeclaredToleranceLu;
  /** Fail a file whose metadata declares no loudness at all (default false). */
  requireDeclared?: boolean;
}

/**
 * Dialogue-gated loudness (BS.1770 over the gating blocks a speech detector marks as speech): targetLufs with toleranceLu, or minLufs and/or maxLufs.
 * @dependentRequired {"toleranceLu": ["targetLufs"]}
 */
export interface DialogueLoudnessRule extends RuleBase {
  type: 'dialogue-loudness';
  targetLufs?: Lufs;
  /** @minimum 0 @maximum 10 */
  toleranceLu?: number;
  minLufs?: Lufs;
  maxLufs?: Lufs;
  /** Below this share of speech blocks dialogue is not measurable (default 10). */
  minSpeechSharePercent?: SpeechSharePercent;
  /** Fail when dialogue is not measurable; by default the rule is then not applied. */
  requireDialogue?: boolean;
}
/** Share of the programme's gating blocks that hold speech, in percent: at least minPercent and/or at most maxPercent. */
export interface SpeechShareRule extends RuleBase {
  type: 'speech-share';
  /** @minimum 0 @maximum 100 */
  minPercent?: number;
  /** @minimum 0 @maximum 100 */
  maxPercent?: number;
}
/** Loudness-to-dialogue ratio (EBU R 128 s4): programme minus dialogue loudness, in LU, at most maxLu and/or at least minLu. Not applied when dialogue is not measurable. */
export interface LoudnessToDialogueRule extends RuleBase {
  type: 'loudness-to-dialogue';
  /** @minimum -40 @maximum 40 */
  maxLu?: number;
  /** @minimum -40 @maximum 40 */
  minLu?: number;
}

/** @discriminator type */
export type Rule =
  | IntegratedLoudnessRule
  | TruePeakRule
  | SamplePeakRule
  | LoudnessRangeRule
  | MomentaryMaxRule
  | ShortTermMaxRule
  | ClippingRule
  | SilenceGapRule
  | EdgeSilenceRule
  | DeadChannelRule
  | ChannelCopyRule
  | PhaseRule
  | DcOffsetRule
  | SampleRateRule
  | BitDepthRule
  | ChannelsRule
  | DurationRule
  | ContainerRule
  | DropoutRule
  | LineUpToneRule
  | ToneSeparationRule
  | SyncPopRule
  | IntegrityRule
  | DeclaredLoudnessRule
  | DownmixLoudnessRule
  | DownmixTruePeakRule
  | DownmixClippingRule
  | MonoCompatibilityRule
  | DialogueLoudnessRule
  | SpeechShareRule
  | LoudnessToDialogueRule;

export type RuleType = Rule['type'];

/** @minimum -60 @maximum 20 */
type GainDb = number;
/** Gains of the Lo/Ro downmix (ITU-R BS.775; ATSC A/52 section 7.8): -3 dB (1/sqrt 2) centre and surround, LFE omitted, when absent. */
export interface DownmixSettings {
  centreGainDb?: GainDb;
  surroundGainDb?: GainDb;
  /** LFE into both outputs at this gain; omitted (BS.775) when absent. */
  lfeGainDb?: GainDb;
  /** Also read each channel's integrated loudness alone (one more K-weighting pass per channel; not summable). */
  channelLoudness?: boolean;
}

export interface Profile {
  id: Slug;
  /** @minLength 1 @maxLength 120 */
  name: string;
  /** @pattern ^[0-9]+\.[0-9]+\.[0-9]+$ */
  version: string;
  /** @maxLength 2000 */
  description: string;
  /**
   * The published specification followed, or "house rule".
   * @minLength 1 @maxLength 300
   */
  basis: string;
  timecode?: { frameRate: FrameRateId };
  /**
   * Channel layout of delivered files that do not name their channels (no WAVE channel mask, no BW64 chna chunk): sets their channel roles and so their loudness weights (ITU-R BS.1770-5 Annex 3). A file with another channel count is an error (layout_mismatch); a file that names its own channels keeps them.
   */
  layout?: LayoutName;
  /** Fold-down settings; the readings run when a downmix or mono rule asks, or channelLoudness is set. */
  downmix?: DownmixSettings;
  /** @minItems 1 @maxItems 200 */
  rules: Rule[];
}

/** Clipping defaults: 3 samples within 0.01 dB of full scale (common practice, see analysis/clipping.ts). */
export const DEFAULT_MAX_CLIP_RUNS = 0;
/** The phase rule's default is the meter's own threshold, so a profile and a bare analysis agree. */
export const DEFAULT_PHASE_MIN_CORRELATION = DEFAULT_PHASE_THRESHOLD;
