// Measurements + profile -> report. Pure: the same document and profile give the same report
// (apart from generatedAt), so the CLI, the API and tests share it.

import type { AnalysisDocument } from '../engine/document.ts';
import { EarmarkError } from '../errors/index.ts';
import { runCheck } from './checks.ts';
import { buildFlags, type FlagOptions } from './flags.ts';
import { analysisOptionsForProfile } from './options.ts';
import { REPORT_VERSION, type CheckResult, type Correction, type QcReport, type Verdict } from './report.ts';
import { FRAME_RATES, timecodeAtSample, type FrameRate } from './timecode.ts';
import type { FrameRateId, IntegratedLoudnessRule, Profile } from './types.ts';

/** Frame rate when neither the profile nor the caller sets one. */
export const DEFAULT_FRAME_RATE: FrameRateId = '25';

export interface EvaluateOptions extends FlagOptions {
  /** Overrides the profile's timecode frame rate (`check --fps`). */
  frameRate?: FrameRateId;
  now?: Date;
}

/** The document must come from an analysis run with this profile's detector settings. */
function assertSettings(profile: Profile, doc: AnalysisDocument): void {
  const wanted = analysisOptionsForProfile(profile);
  const mismatch = (what: string, expected: number, actual: number) => {
    if (Math.abs(expected - actual) > 1e-6) {
      throw new EarmarkError('invalid_argument', `the analysis used ${what} ${actual}, profile ${profile.id} needs ${expected}: analyse with analysisOptionsForProfile(profile)`, { field: what });
    }
  };
  if (wanted.clipping?.minRunSamples !== undefined) mismatch('clipping.minRunSamples', wanted.clipping.minRunSamples, doc.settings.clipping.minRunSamples);
  if (wanted.clipping?.thresholdDbfs !== undefined) mismatch('clipping.thresholdDbfs', wanted.clipping.thresholdDbfs, doc.settings.clipping.thresholdDbfs);
  if (wanted.silence?.thresholdDbfs !== undefined) mismatch('silence.thresholdDbfs', wanted.silence.thresholdDbfs, doc.settings.silence.thresholdDbfs);
  if (wanted.truePeak?.overCeilingDbtp !== undefined && doc.settings.overCeilingDbtp > wanted.truePeak.overCeilingDbtp + 1e-6) {
    mismatch('truePeak.overCeilingDbtp', wanted.truePeak.overCeilingDbtp, doc.settings.overCeilingDbtp);
  }
}

export function verdictOf(checks: CheckResult[]): Verdict {
  const broken = checks.filter((c) => !c.passed);
  if (broken.some((c) => c.severity === 'fail')) return 'fail';
  return broken.length > 0 ? 'warn' : 'pass';
}

/** Gain to the target (or, for a range without target, to the nearest end of the range). */
export function correctionFor(profile: Profile, doc: AnalysisDocument): Correction | null {
  const rule = profile.rules.find((r): r is IntegratedLoudnessRule => r.type === 'integrated-loudness' && r.severity === 'fail')
    ?? profile.rules.find((r): r is IntegratedLoudnessRule => r.type === 'integrated-loudness');
  const measured = doc.summary.integratedLufs;
  if (!rule || measured === null) return null;
  const targetLufs = rule.targetLufs ?? Math.min(rule.maxLufs ?? Infinity, Math.max(rule.minLufs ?? -Infinity, measured));
  const gainDb = Math.round((targetLufs - measured) * 100) / 100;
  const ceilings = profile.rules.flatMap((r) => (r.type === 'true-peak' ? [r.maxDbtp] : []));
  const ceilingDbtp = ceilings.length > 0 ? Math.min(...ceilings) : null;
  const truePeak = doc.summary.truePeakDbtp;
  const truePeakAfterDbtp = truePeak === null ? null : truePeak + gainDb;
  return { targetLufs, gainDb, truePeakAfterDbtp, ceilingDbtp, exceedsCeiling: ceilingDbtp !== null && truePeakAfterDbtp !== null && truePeakAfterDbtp > ceilingDbtp };
}

export function evaluate(profile: Profile, doc: AnalysisDocument, options: EvaluateOptions = {}): QcReport {
  assertSettings(profile, doc);
  const rate: FrameRate = FRAME_RATES[options.frameRate ?? profile.timecode?.frameRate ?? DEFAULT_FRAME_RATE];
  const checks = profile.rules.map((rule) => runCheck(rule, doc));
  const { flags, flagsTotal } = buildFlags(profile, doc, checks, rate, options);
  const origin = doc.format.timeReferenceSamples;
  return {
    ...doc,
    reportVersion: REPORT_VERSION,
    verdict: verdictOf(checks),
    profile: { id: profile.id, version: profile.version, name: profile.name, basis: profile.basis },
    checks,
    flags,
    flagsTotal,
    flagsTruncated: flags.length < flagsTotal,
    correction: correctionFor(profile, doc),
    timecode: {
      frameRate: rate.id,
      dropFrame: rate.dropFrames > 0,
      originSeconds: origin === null ? 0 : origin / doc.format.sampleRate,
      originTimecode: timecodeAtSample(0, doc.format.sampleRate, rate, origin),
    },
    generatedAt: (options.now ?? new Date()).toISOString(),
  };
}
