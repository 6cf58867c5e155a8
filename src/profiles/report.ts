// The QC report: the analysis document (spread, so every analysis field stays where the CLI's
// `analyze --json` puts it) plus verdict, checks, flags and correction. Schema: openapi/report.schema.json.

import type { AnalysisDocument, DocumentIntegrityProblem } from '../engine/document.ts';
import type { HeadTimecode } from './head.ts';
import type { FrameRateId, RuleType, Severity } from './types.ts';

export const REPORT_VERSION = 2;

export type Verdict = 'pass' | 'warn' | 'fail';
/**
 * not_measurable: the engine has no value (e.g. loudness below the gate); `passed` says how it counts.
 * marginal: outside the production tolerance but inside the added measurement tolerance; counts as warn.
 */
export type CheckOutcome = 'pass' | 'fail' | 'not_measurable' | 'marginal';

export interface CheckLimit {
  min?: number;
  max?: number;
  targetLufs?: number;
  toleranceLu?: number;
  measurementToleranceLu?: number;
  allowed?: Array<number | string>;
}

export interface CheckResult {
  ruleId: string;
  type: RuleType;
  /** What a broken check makes the verdict: the rule's severity, or warn for a marginal outcome. */
  severity: Severity;
  source: string | null;
  /** The measured value; arrays for layouts, strings for containers and encodings. */
  measured: number | string | Array<number | string> | null;
  unit: string | null;
  limit: CheckLimit;
  outcome: CheckOutcome;
  /** Whether the rule is met; false makes the verdict `severity` (or worse). */
  passed: boolean;
  explanation: string;
}

/** Report vocabulary for time-located findings; stable, documented in README.md. */
export type FlagKind =
  | 'data_ends_early'
  | 'unreadable_data'
  | 'non_finite_samples'
  | 'no_audio'
  | 'too_short'
  | 'clipping'
  | 'dropout'
  | 'silence_gap'
  | 'silence'
  | 'head_silence'
  | 'tail_silence'
  | 'true_peak_over'
  | 'loud_short_term'
  | 'loud_momentary'
  | 'phase_problem'
  | 'dead_channel'
  | 'duplicate_channel'
  | 'inverted_channel'
  | 'dc_offset'
  | 'declared_loudness_mismatch'
  | 'downmix_clipping'
  | 'line_up_tone'
  | 'tone_into_programme'
  | 'sync_pop'
  | 'sync_pop_missing';

/** fail and warn come from a broken rule; a remark is a finding no broken rule judges: shown, never counted. */
export type FlagSeverity = Severity | 'remark';

export interface Flag {
  /** 1-based position in `flags`: the same number in the JSON, the text output and the page. */
  number: number;
  kind: FlagKind;
  /** Short words for the kind, e.g. "Clipping run". */
  title: string;
  /** The rule that judges this finding, or null when none of the profile's rules does. */
  ruleId: string | null;
  severity: FlagSeverity;
  /** Channel index (0-based), or null for all channels together. */
  channel: number | null;
  /** "2 R": 1-based channel number and role, or "all"; as printed everywhere. */
  channelName: string;
  otherChannel?: number;
  otherChannelName?: string;
  startSample: number;
  endSample: number;
  /** From the first sample of the file. */
  startSeconds: number;
  endSeconds: number;
  /** SMPTE ST 12-1 labels at the report's frame rate, from the BWF time reference when present. */
  startTimecode: string;
  endTimecode: string;
  /** Most extreme value inside, in `unit` (dBTP, dBFS, LUFS, correlation); null when the kind has none. */
  worstValue: number | null;
  unit: string | null;
  /** Engine events merged into this flag (a burst of overs is one flag). */
  count: number;
  /** Raw detections inside (clipped samples, over samples); `count` for kinds without. */
  detections: number;
  /** One line for a person: what, where, how bad. */
  message: string;
}

/** Integrity: the audio the file declares is all there and readable. */
export type { IntegrityCode } from '../engine/document.ts';

export interface IntegrityProblem extends DocumentIntegrityProblem {
  atTimecode: string;
}

export interface Correction {
  targetLufs: number;
  gainDb: number;
  /** True peak after the gain: a linear gain moves the true peak by exactly the gain. */
  truePeakAfterDbtp: number | null;
  ceilingDbtp: number | null;
  /** True when the gain alone breaks the ceiling: a limiter (or less gain) is needed. */
  exceedsCeiling: boolean;
}

export interface ReportTimecode {
  frameRate: FrameRateId;
  dropFrame: boolean;
  /** BWF TimeReference in seconds since midnight, or 0 without one. */
  originSeconds: number;
  originTimecode: string;
}

/**
 * Analysis events of one kind past the analysis's event cap: counted, never listed or merged into
 * flags (each may extend a listed flag or be a flag of its own). The checks count them all.
 */
export interface UnlistedEvents {
  kind: FlagKind;
  /** The rule that judges this kind, or null when none of the profile's rules does. */
  ruleId: string | null;
  /** That rule's severity when it is broken, else remark. */
  severity: FlagSeverity;
  /** Engine events not listed (a clipping run, a span of overs: as a flag's `count`). */
  count: number;
}

/** One count per flag severity (written out, so the generated schema allows no other key). */
export interface FlagCounts {
  fail: number;
  warn: number;
  remark: number;
}

export interface QcReport extends AnalysisDocument {
  reportVersion: number;
  verdict: Verdict;
  /** The first line everywhere (text, page, dashboard): the verdict and its main reason in plain words. */
  headline: string;
  /** Problems with the file itself; any one fails the report unless the profile lowers it to warn. */
  integrity: { intact: boolean; severity: Severity; problems: IntegrityProblem[] };
  profile: { id: string; version: string; name: string; basis: string };
  checks: CheckResult[];
  flags: Flag[];
  /**
   * Flags made from the listed analysis events, before the report's flag cap (after merging);
   * flags.length < flagsTotal when that cap cut the list. Events past the analysis's event cap
   * are not in it: see unlistedEvents.
   */
  flagsTotal: number;
  /** The report's flag cap cut the list (flags.length < flagsTotal). */
  flagsTruncated: boolean;
  /** flagsTotal by severity (remarks included). */
  flagCounts: FlagCounts;
  /** Events past the analysis's event cap, by kind, not in any flag; empty when none (absent in older reports). */
  unlistedEvents?: UnlistedEvents[];
  correction: Correction | null;
  timecode: ReportTimecode;
  /** SMPTE labels of the head readings (`head`) at the report's frame rate. */
  headTimecode: HeadTimecode;
  generatedAt: string;
}
