// Measurements + profile -> report. Pure: the same document and profile give the same report
// (apart from generatedAt), so the CLI, the API and tests share it.

import { DEFAULT_DOWNMIX_GAIN_DB } from '../analysis/downmix.ts';
import type { AnalysisOptions } from '../analysis/runner.ts';
import type { AnalysisDocument } from '../engine/document.ts';
import { EarmarkError } from '../errors/index.ts';
import { integrityCheck, runCheck } from './checks.ts';
import { buildFlags, type FlagOptions } from './flags.ts';
import { analysisOptionsForProfile } from './options.ts';
import {
  REPORT_VERSION,
  type CheckResult,
  type Correction,
  type IntegrityProblem,
  type QcReport,
  type Verdict,
} from './report.ts';
import { fmt } from './format.ts';
import { headTimecodeOf } from './head.ts';
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
      throw new EarmarkError(
        'invalid_argument',
        `the analysis used ${what} ${actual}, profile ${profile.id} needs ${expected}: analyse with analysisOptionsForProfile(profile)`,
        { field: what },
      );
    }
  };
  if (wanted.clipping?.minRunSamples !== undefined)
    mismatch('clipping.minRunSamples', wanted.clipping.minRunSamples, doc.settings.clipping.minRunSamples);
  if (wanted.clipping?.thresholdDbfs !== undefined)
    mismatch('clipping.thresholdDbfs', wanted.clipping.thresholdDbfs, doc.settings.clipping.thresholdDbfs);
  if (wanted.silence?.thresholdDbfs !== undefined)
    mismatch('silence.thresholdDbfs', wanted.silence.thresholdDbfs, doc.settings.silence.thresholdDbfs);
  if (
    wanted.truePeak?.overCeilingDbtp !== undefined &&
    doc.settings.overCeilingDbtp > wanted.truePeak.overCeilingDbtp + 1e-6
  ) {
    mismatch('truePeak.overCeilingDbtp', wanted.truePeak.overCeilingDbtp, doc.settings.overCeilingDbtp);
  }
  assertDownmixSettings(profile, doc, wanted);
}

/** A profile's fold-down rules need the readings, made with the profile's gains. */
function assertDownmixSettings(profile: Profile, doc: AnalysisDocument, wanted: AnalysisOptions): void {
  const w = wanted.downmix;
  if (!w?.enabled) return;
  const refuse = (what: string) => {
    throw new EarmarkError(
      'invalid_argument',
      `the analysis ${what}, profile ${profile.id} needs it: analyse with analysisOptionsForProfile(profile)`,
      { field: 'downmix' },
    );
  };
  if (!doc.downmix.measured) refuse('did not measure the downmix');
  if (w.channelLoudness && doc.downmix.channelIntegratedLufs === null) refuse('did not read per-channel loudness');
  const gains = doc.downmix.loRo?.gains;
  if (!gains) return;
  const differs = (expected: number | undefined, actual: number | null, fallback: number | null) =>
    Math.abs((expected ?? fallback ?? -Infinity) - (actual ?? -Infinity)) > 1e-6;
  if (
    differs(w.centreGainDb, gains.centreGainDb, DEFAULT_DOWNMIX_GAIN_DB) ||
    differs(w.surroundGainDb, gains.surroundGainDb, DEFAULT_DOWNMIX_GAIN_DB) ||
    (w.lfeGainDb ?? null) !== gains.lfeGainDb
  )
    refuse('used other downmix gains');
}

export function verdictOf(checks: CheckResult[]): Verdict {
  const broken = checks.filter((c) => !c.passed);
  if (broken.some((c) => c.severity === 'fail')) return 'fail';
  return broken.length > 0 ? 'warn' : 'pass';
}

/** Gain to the target (or, for a range without target, to the nearest end of the range). */
export function correctionFor(profile: Profile, doc: AnalysisDocument): Correction | null {
  const rule =
    profile.rules.find((r): r is IntegratedLoudnessRule => r.type === 'integrated-loudness' && r.severity === 'fail') ??
    profile.rules.find((r): r is IntegratedLoudnessRule => r.type === 'integrated-loudness');
  const measured = doc.summary.integratedLufs;
  if (!rule || measured === null) return null;
  const targetLufs =
    rule.targetLufs ?? Math.min(rule.maxLufs ?? Infinity, Math.max(rule.minLufs ?? -Infinity, measured));
  const gainDb = Math.round((targetLufs - measured) * 100) / 100;
  const ceilings = profile.rules.flatMap((r) => (r.type === 'true-peak' ? [r.maxDbtp] : []));
  const ceilingDbtp = ceilings.length > 0 ? Math.min(...ceilings) : null;
  const reconstructed = profile.rules.some((r) => r.type === 'true-peak' && r.reading === 'reconstructed');
  const truePeak = reconstructed ? doc.summary.reconstructedPeakDbtp : doc.summary.truePeakDbtp;
  const truePeakAfterDbtp = truePeak === null ? null : truePeak + gainDb;
  return {
    targetLufs,
    gainDb,
    truePeakAfterDbtp,
    ceilingDbtp,
    exceedsCeiling: ceilingDbtp !== null && truePeakAfterDbtp !== null && truePeakAfterDbtp > ceilingDbtp,
  };
}

/** One line, first everywhere: the verdict and its main reason in plain words. */
export function headlineOf(
  verdict: Verdict,
  checks: CheckResult[],
  integrity: CheckResult,
  problems: IntegrityProblem[],
  doc: AnalysisDocument,
): string {
  const head = verdict.toUpperCase();
  if (problems.length > 0) {
    const p = problems[0];
    const more =
      problems.length > 1 ? ` (+${problems.length - 1} more file problem${problems.length > 2 ? 's' : ''})` : '';
    return `${head}: damaged file at ${p.atTimecode}: ${p.message}${more}`;
  }
  if (doc.summary.allSilent) return `${head}: the file is digital silence throughout`;
  const broken = checks
    .filter((c) => !c.passed && c !== integrity)
    .sort((a, b) => (a.severity === b.severity ? 0 : a.severity === 'fail' ? -1 : 1));
  if (broken.length === 0) {
    const s = doc.summary;
    const lufs = s.integratedLufs === null ? 'integrated not measurable' : `integrated ${fmt(s.integratedLufs)} LUFS`;
    const tp = s.truePeakDbtp === null ? '' : `, true peak ${fmt(s.truePeakDbtp)} dBTP`;
    return `${head}: all ${checks.length} checks met; ${lufs}${tp}`;
  }
  const more = broken.length > 1 ? ` (+${broken.length - 1} more)` : '';
  return `${head}: ${broken[0].explanation}${more}`;
}

export function evaluate(profile: Profile, doc: AnalysisDocument, options: EvaluateOptions = {}): QcReport {
  assertSettings(profile, doc);
  const rate: FrameRate = FRAME_RATES[options.frameRate ?? profile.timecode?.frameRate ?? DEFAULT_FRAME_RATE];
  // Integrity first: every profile judges it, whether or not it names it.
  const integrity = integrityCheck(profile, doc);
  const checks = [
    integrity,
    ...profile.rules.filter((r) => r.type !== 'integrity').map((rule) => runCheck(rule, doc, rate)),
  ];
  const { flags, flagsTotal, flagCounts, unlistedEvents } = buildFlags(profile, doc, checks, integrity, rate, options);
  const origin = doc.format.timeReferenceSamples;
  const problems = doc.integrity.problems.map((p) => ({
    ...p,
    atTimecode: timecodeAtSample(p.atSample, doc.format.sampleRate, rate, origin),
  }));
  const verdict = verdictOf(checks);
  return {
    ...doc,
    reportVersion: REPORT_VERSION,
    verdict,
    headline: headlineOf(verdict, checks, integrity, problems, doc),
    integrity: { intact: problems.length === 0, severity: integrity.severity, problems },
    profile: { id: profile.id, version: profile.version, name: profile.name, basis: profile.basis },
    checks,
    flags,
    flagsTotal,
    flagsTruncated: flags.length < flagsTotal,
    flagCounts,
    unlistedEvents,
    correction: correctionFor(profile, doc),
    timecode: {
      frameRate: rate.id,
      dropFrame: rate.dropFrames > 0,
      originSeconds: origin === null ? 0 : origin / doc.format.sampleRate,
      originTimecode: timecodeAtSample(0, doc.format.sampleRate, rate, origin),
    },
    headTimecode: headTimecodeOf(doc, rate),
    generatedAt: (options.now ?? new Date()).toISOString(),
  };
}
