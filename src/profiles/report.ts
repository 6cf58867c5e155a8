// The QC report: the analysis document (spread, so every analysis field stays where the CLI's
// `analyze --json` puts it) plus verdict, checks, flags and correction. Schema: openapi/report.schema.json.

import type { AnalysisDocument } from '../engine/document.ts';
import type { FrameRateId, RuleType, Severity } from './types.ts';

export const REPORT_VERSION = 1;

export type Verdict = 'pass' | 'warn' | 'fail';
/** not_measurable: the engine has no value (e.g. loudness below the gate); `passed` says how it counts. */
export type CheckOutcome = 'pass' | 'fail' | 'not_measurable';

export interface CheckLimit {
  min?: number;
  max?: number;
  targetLufs?: number;
  toleranceLu?: number;
  allowed?: Array<number | string>;
}

export interface CheckResult {
  ruleId: string;
  type: RuleType;
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

/** Report vocabulary for time-located problems; stable, documented in src/profiles/README.md. */
export type FlagKind =
  | 'clipping' | 'silence_gap' | 'head_silence' | 'tail_silence' | 'true_peak_over'
  | 'loud_short_term' | 'loud_momentary' | 'phase_problem' | 'dead_channel' | 'duplicate_channel' | 'inverted_channel';

export interface Flag {
  kind: FlagKind;
  ruleId: string;
  severity: Severity;
  /** Channel index, or null for all channels together. */
  channel: number | null;
  otherChannel?: number;
  startSample: number;
  endSample: number;
  /** From the first sample of the file. */
  startSeconds: number;
  endSeconds: number;
  /** SMPTE ST 12-1 labels at the report's frame rate, from the BWF time reference when present. */
  startTimecode: string;
  endTimecode: string;
  /** Most extreme value inside (dBTP, dBFS, LUFS, correlation); null when the kind has none. */
  peakValue: number | null;
  /** Engine events merged into this flag. */
  mergedEvents: number;
  /** Raw detections inside (clipped samples, over samples); mergedEvents for kinds without. */
  detections: number;
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

export interface QcReport extends AnalysisDocument {
  reportVersion: number;
  verdict: Verdict;
  profile: { id: string; version: string; name: string; basis: string };
  checks: CheckResult[];
  flags: Flag[];
  /** Flags before the cap (after merging); flags.length < flagsTotal when truncated. */
  flagsTotal: number;
  flagsTruncated: boolean;
  correction: Correction | null;
  timecode: ReportTimecode;
  generatedAt: string;
}
