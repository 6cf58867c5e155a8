// A delivery package: each file checked against the profile, then the set checked together
// (src/engine/package-set.ts). The package verdict is the worst of the members' verdicts and
// the set checks (a broken set check fails).

import type { ResidualSpan } from '../analysis/stem-residual.ts';
import { analyzeFile } from '../engine/analyze-file.ts';
import type { ThreadChoice } from '../engine/thread-plan.ts';
import {
  assertPackageShape,
  checkPackageSet,
  type PackageMemberInput,
  type PackageRole,
  type PackageSetResult,
  type SetCheckId,
} from '../engine/package-set.ts';
import {
  analysisOptionsForProfile,
  decodeOptionsForProfile,
  evaluate,
  FRAME_RATES,
  DEFAULT_FRAME_RATE,
  timecodeAtSample,
  type FrameRateId,
  type Profile,
  type QcReport,
  type Verdict,
} from '../profiles/index.ts';

export const PACKAGE_REPORT_VERSION = 1;

export interface PackageMemberResult {
  name: string;
  role: PackageRole;
  verdict: Verdict;
  headline: string;
  report: QcReport;
}

/** A residual span with its times, in seconds and SMPTE timecode at the report's frame rate. */
export interface PackageResidualSpan extends ResidualSpan {
  startSeconds: number;
  endSeconds: number;
  startTimecode: string;
  endTimecode: string;
  channelName: string;
}

export interface PackageReport {
  packageReportVersion: number;
  verdict: Verdict;
  headline: string;
  profile: { id: string; version: string; name: string };
  frameRate: FrameRateId;
  members: PackageMemberResult[];
  set: PackageSetResult;
  residualSpans: PackageResidualSpan[];
  generatedAt: string;
}

export interface CheckPackageOptions {
  /** The profile stems are checked against (stems rarely meet a programme's loudness target); default the package's. */
  stemProfile?: Profile;
  toleranceDb?: number;
  windowSeconds?: number;
  frameRate?: FrameRateId;
  threads?: ThreadChoice;
  signal?: AbortSignal;
  now?: Date;
}

const SET_CHECK_WORDS: Record<SetCheckId, string> = {
  same_sample_rate: 'sample rates differ',
  same_bit_depth: 'bit depths differ',
  same_length: 'lengths differ',
  stem_channels: "a stem's channels differ from the mix's",
  stems_sum_to_mix: 'the stems do not sum to the mix',
};

/** Failing files named in the headline; the rest are counted. */
const SHOWN_MEMBERS = 3;

const RANK: Record<Verdict, number> = { pass: 0, warn: 1, fail: 2 };

export function worstVerdict(verdicts: readonly Verdict[]): Verdict {
  return verdicts.reduce<Verdict>((a, b) => (RANK[b] > RANK[a] ? b : a), 'pass');
}

export async function checkPackage(
  profile: Profile,
  inputs: readonly PackageMemberInput[],
  options: CheckPackageOptions = {},
): Promise<PackageReport> {
  assertPackageShape(inputs);
  const members: PackageMemberResult[] = [];
  const profileOf = (input: PackageMemberInput) => (input.role === 'stem' ? (options.stemProfile ?? profile) : profile);
  for (const input of inputs) {
    const name = input.name ?? input.path;
    const own = profileOf(input);
    const document = await analyzeFile(input.path, {
      analysis: analysisOptionsForProfile(own),
      decode: { ...decodeOptionsForProfile(own), ...input.decode },
      displayName: name,
      ...(options.threads !== undefined ? { threads: options.threads } : {}),
      ...(options.signal ? { signal: options.signal } : {}),
    });
    const report = evaluate(own, document, {
      ...(options.frameRate ? { frameRate: options.frameRate } : {}),
      ...(options.now ? { now: options.now } : {}),
    });
    members.push({ name, role: input.role, verdict: report.verdict, headline: report.headline, report });
  }
  // Each member decodes as in its own check (its profile's declared layout).
  const decoded = inputs.map((input) => ({
    ...input,
    decode: { ...decodeOptionsForProfile(profileOf(input)), ...input.decode },
  }));
  const set = await checkPackageSet(decoded, {
    ...(options.toleranceDb !== undefined ? { toleranceDb: options.toleranceDb } : {}),
    ...(options.windowSeconds !== undefined ? { windowSeconds: options.windowSeconds } : {}),
    ...(options.signal ? { signal: options.signal } : {}),
  });
  return packageReport(profile, members, set, options);
}

/** Puts the report together from members already checked (the CLI here, a queue's parent job elsewhere). */
export function packageReport(
  profile: Profile,
  members: PackageMemberResult[],
  set: PackageSetResult,
  options: Pick<CheckPackageOptions, 'frameRate' | 'now'> = {},
): PackageReport {
  const frameRate = options.frameRate ?? profile.timecode?.frameRate ?? DEFAULT_FRAME_RATE;
  const brokenSet = set.checks.filter((c) => !c.passed);
  const verdict = worstVerdict([...members.map((m) => m.verdict), ...(brokenSet.length > 0 ? ['fail' as const] : [])]);
  return {
    packageReportVersion: PACKAGE_REPORT_VERSION,
    verdict,
    headline: headline(
      verdict,
      members,
      brokenSet.map((c) => c.id),
      set,
    ),
    profile: { id: profile.id, version: profile.version, name: profile.name },
    frameRate,
    members,
    set,
    residualSpans: residualSpans(members, set, frameRate),
    generatedAt: (options.now ?? new Date()).toISOString(),
  };
}

function headline(
  verdict: Verdict,
  members: readonly PackageMemberResult[],
  broken: readonly SetCheckId[],
  set: PackageSetResult,
): string {
  const word = verdict.toUpperCase();
  const failedMembers = members.filter((m) => m.verdict !== 'pass');
  const r = set.residual;
  const sumWords =
    r && r.residualRelativeDb !== null
      ? ` (residual ${r.residualRelativeDb.toFixed(1)} dB relative to the mix, tolerance ${r.toleranceDb} dB)`
      : '';
  const memberWords = failedMembers
    .slice(0, SHOWN_MEMBERS)
    .map((m) => `${m.name} ${m.verdict}s: ${m.headline.replace(/^(PASS|WARN|FAIL): /, '')}`);
  if (failedMembers.length > SHOWN_MEMBERS)
    memberWords.push(`${failedMembers.length - SHOWN_MEMBERS} more files do not pass`);
  const reasons = [
    ...broken.map((id) => `${SET_CHECK_WORDS[id]}${id === 'stems_sum_to_mix' ? sumWords : ''}`),
    ...memberWords,
  ];
  if (reasons.length === 0) return `${word}: ${members.length} files agree and each meets its profile`;
  return `${word}: ${reasons.join('; ')}`;
}

function residualSpans(
  members: readonly PackageMemberResult[],
  set: PackageSetResult,
  frameRateId: FrameRateId,
): PackageResidualSpan[] {
  const mix = members.find((m) => m.role === 'mix');
  if (!mix || !set.residual) return [];
  const rate = mix.report.format.sampleRate;
  const origin = mix.report.format.timeReferenceSamples;
  const frameRate = FRAME_RATES[frameRateId];
  const labels = mix.report.format.channelLabels;
  return set.residual.spans.map((s) => ({
    ...s,
    startSeconds: s.startFrame / rate,
    endSeconds: s.endFrame / rate,
    startTimecode: timecodeAtSample(s.startFrame, rate, frameRate, origin),
    endTimecode: timecodeAtSample(s.endFrame, rate, frameRate, origin),
    channelName: labels[s.channel] ?? `ch ${s.channel + 1}`,
  }));
}
