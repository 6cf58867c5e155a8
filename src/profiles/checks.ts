// One check per rule. Policy for missing measurements (documented in README.md): integrated
// loudness that cannot be measured fails its rule (a delivery must have a measurable programme);
// every other rule passes with a "not measurable" note (no short-term max in a 2 s file is not a breach).

import { channelName, type AnalysisDocument } from '../engine/document.ts';
import { fmt, fmtAgainst, fmtGap, fmtLimit } from './format.ts';
import type { CheckLimit, CheckResult } from './report.ts';
import { DEFAULT_MAX_CLIP_RUNS, type DropoutRule, type IntegratedLoudnessRule, type IntegrityRule, type Profile, type Rule } from './types.ts';

type Draft = Omit<CheckResult, 'ruleId' | 'type' | 'severity' | 'source'> & { severity?: CheckResult['severity'] };

const notMeasurable = (what: string, unit: string, limit: CheckLimit, why: string, passed = true): Draft => ({
  measured: null, unit, limit, outcome: 'not_measurable', passed,
  explanation: `${what} is not measurable (${why}); ${passed ? 'the rule is not applied' : 'the rule fails'}`,
});

const verdictOf = (passed: boolean): 'pass' | 'fail' => (passed ? 'pass' : 'fail');

/** Ceiling-type check: value <= max. */
function atMost(what: string, value: number | null, max: number, unit: string, whyNull: string): Draft {
  const limit = { max };
  if (value === null) return notMeasurable(what, unit, limit, whyNull);
  const passed = value <= max;
  const shown = fmtAgainst(value, max);
  const explanation = passed
    ? `${what} ${shown} ${unit} is within the ${fmtLimit(max)} ${unit} maximum`
    : `${what} ${shown} ${unit} is ${fmtGap(value - max)} ${unit === 'LUFS' ? 'LU' : 'dB'} above the ${fmtLimit(max)} ${unit} maximum`;
  return { measured: value, unit, limit, outcome: verdictOf(passed), passed, explanation };
}

/** Range check with either end optional; `unitGap` names the unit of the distance (LU, s). */
function within(what: string, value: number, min: number | undefined, max: number | undefined, unit: string, unitGap: string): Draft {
  const limit = { ...(min !== undefined ? { min } : {}), ...(max !== undefined ? { max } : {}) };
  const lowBy = min !== undefined ? min - value : -Infinity;
  const highBy = max !== undefined ? value - max : -Infinity;
  const passed = lowBy <= 0 && highBy <= 0;
  const range = min !== undefined && max !== undefined ? `${fmtLimit(min)} to ${fmtLimit(max)} ${unit}` : min !== undefined ? `at least ${fmtLimit(min)} ${unit}` : `at most ${fmtLimit(max as number)} ${unit}`;
  let explanation: string;
  if (passed) explanation = `${what} ${fmt(value)} ${unit} is within ${range}`;
  else if (lowBy > 0) explanation = `${what} ${fmtAgainst(value, min as number)} ${unit} is ${fmtGap(lowBy)} ${unitGap} below the ${fmtLimit(min as number)} ${unit} minimum`;
  else explanation = `${what} ${fmtAgainst(value, max as number)} ${unit} is ${fmtGap(highBy)} ${unitGap} above the ${fmtLimit(max as number)} ${unit} maximum`;
  return { measured: value, unit, limit, outcome: verdictOf(passed), passed, explanation };
}

/** Why there is no integrated loudness, in plain words. */
export function whyNoLoudness(doc: AnalysisDocument): string {
  const frames = doc.format.framesDecoded;
  if (frames === 0) return 'the file holds no audio';
  if (frames < 0.4 * doc.format.sampleRate) return `the audio is ${fmt(frames / doc.format.sampleRate, 3)} s long, shorter than one 400 ms gating block`;
  if (doc.summary.samplePeakDbfs === null) return 'the file is digital silence throughout';
  return 'no 400 ms block is above the -70 LUFS absolute gate';
}

function integrated(rule: IntegratedLoudnessRule, doc: AnalysisDocument): Draft {
  const value = doc.summary.integratedLufs;
  const hasTarget = rule.targetLufs !== undefined && rule.toleranceLu !== undefined;
  const limit: CheckLimit = hasTarget ? { targetLufs: rule.targetLufs, toleranceLu: rule.toleranceLu } : { ...(rule.minLufs !== undefined ? { min: rule.minLufs } : {}), ...(rule.maxLufs !== undefined ? { max: rule.maxLufs } : {}), ...(rule.targetLufs !== undefined ? { targetLufs: rule.targetLufs } : {}) };
  if (value === null) return notMeasurable('Integrated loudness', 'LUFS', limit, whyNoLoudness(doc), false);
  if (!hasTarget) return { ...within('Integrated loudness', value, rule.minLufs, rule.maxLufs, 'LUFS', 'LU'), limit };
  const target = rule.targetLufs as number;
  const tolerance = rule.toleranceLu as number;
  const measurementTolerance = rule.measurementToleranceLu ?? 0;
  const deviation = value - target;
  const gap = Math.abs(deviation);
  const passed = gap <= tolerance;
  const marginal = !passed && gap <= tolerance + measurementTolerance;
  const side = deviation > 0 ? 'above' : 'below';
  const gapText = fmtAgainst(gap, tolerance);
  const tol = `tolerance ±${fmt(tolerance)} LU${measurementTolerance > 0 ? `, measurement tolerance ±${fmt(measurementTolerance)} LU` : ''}`;
  let explanation = passed && fmt(gap) === '0.0'
    ? `Integrated loudness ${fmt(value)} LUFS is on the ${fmtLimit(target)} LUFS target (${tol})`
    : `Integrated loudness ${fmt(value)} LUFS is ${gapText} LU ${side} the ${fmtLimit(target)} LUFS target (${tol})`;
  if (marginal) explanation += ': outside the tolerance but inside the measurement tolerance, so a warning';
  if (measurementTolerance > 0) limit.measurementToleranceLu = measurementTolerance;
  return {
    measured: value, unit: 'LUFS', limit, outcome: marginal ? 'marginal' : verdictOf(passed), passed, explanation,
    ...(marginal ? { severity: 'warn' as const } : {}),
  };
}

function dropouts(rule: DropoutRule, doc: AnalysisDocument): Draft {
  const inScope = (c: number) => !rule.channels || rule.channels.some((l) => l === doc.format.channelLabels[c]);
  const perChannel = doc.channels.filter((c) => inScope(c.index) && c.dropouts > 0);
  const n = doc.summary.allChannelDropouts + perChannel.reduce((sum, c) => sum + c.dropouts, 0);
  const scope = rule.channels ? ` in ${rule.channels.join(', ')}` : '';
  const where = [
    ...(doc.summary.allChannelDropouts > 0 ? [`${doc.summary.allChannelDropouts} in all channels`] : []),
    ...perChannel.map((c) => `${c.dropouts} in ${channelName(doc, c.index)}`),
  ];
  return count(n === 1 ? `dropout${scope}` : `dropouts${scope}`, n, rule.maxCount ?? 0, 'dropouts', where.length > 0 ? ` (${where.join(', ')})` : '');
}

function integrityDraft(doc: AnalysisDocument): Draft {
  const problems = doc.integrity.problems;
  const passed = problems.length === 0;
  return {
    measured: problems.map((p) => p.code), unit: null, limit: { max: 0 }, outcome: verdictOf(passed), passed,
    explanation: passed ? 'The file is complete and readable' : problems.map((p) => p.message).join('; '),
  };
}

/** The file itself: always checked, fail unless the profile lowers it to warn. */
export function integrityCheck(profile: Profile, doc: AnalysisDocument): CheckResult {
  const rule = profile.rules.find((r): r is IntegrityRule => r.type === 'integrity');
  if (rule) return runCheck(rule, doc);
  const taken = profile.rules.some((r) => r.id === 'integrity');
  return { ruleId: taken ? 'file-integrity' : 'integrity', type: 'integrity', severity: 'fail', source: 'every profile: the file must be complete and readable', ...integrityDraft(doc) };
}


function count(what: string, n: number, max: number, unit: string, detail = ''): Draft {
  const passed = n <= max;
  const explanation = `${n} ${what}${detail}; ${max === 0 ? 'none allowed' : `at most ${max} allowed`}`;
  return { measured: n, unit, limit: { max }, outcome: verdictOf(passed), passed, explanation };
}

function membership(what: string, value: number | string, allowed: Array<number | string>, unit: string | null): Draft {
  const passed = allowed.includes(value);
  const shown = `${value}${unit ? ` ${unit}` : ''}`;
  const explanation = passed ? `${what} ${shown} is allowed` : `${what} ${shown} is not one of ${allowed.join(', ')}`;
  return { measured: value, unit, limit: { allowed }, outcome: verdictOf(passed), passed, explanation };
}

function draftFor(rule: Rule, doc: AnalysisDocument): Draft {
  const s = doc.summary;
  switch (rule.type) {
    case 'integrated-loudness': return integrated(rule, doc);
    case 'true-peak': return rule.reading === 'reconstructed'
      ? atMost('Reconstructed true peak', s.reconstructedPeakDbtp, rule.maxDbtp, 'dBTP', 'digital silence')
      : atMost('True peak (BS.1770 Annex 2)', s.truePeakDbtp, rule.maxDbtp, 'dBTP', 'digital silence');
    case 'dropouts': return dropouts(rule, doc);
    case 'integrity': return integrityDraft(doc);
    case 'sample-peak': return atMost('Sample peak', s.samplePeakDbfs, rule.maxDbfs, 'dBFS', 'digital silence');
    case 'momentary-max': return atMost('Maximum momentary loudness', s.maxMomentaryLufs, rule.maxLufs, 'LUFS', 'shorter than 400 ms or silent');
    case 'short-term-max': return atMost('Maximum short-term loudness', s.maxShortTermLufs, rule.maxLufs, 'LUFS', 'shorter than 3 s or silent');
    case 'loudness-range': {
      const limit = { ...(rule.minLu !== undefined ? { min: rule.minLu } : {}), ...(rule.maxLu !== undefined ? { max: rule.maxLu } : {}) };
      if (s.loudnessRangeLu === null) return notMeasurable('Loudness range', 'LU', limit, 'no short-term value passes the gates');
      return within('Loudness range', s.loudnessRangeLu, rule.minLu, rule.maxLu, 'LU', 'LU');
    }
    case 'clipping': return count(s.clippingRuns === 1 ? 'clipping run' : 'clipping runs', s.clippingRuns, rule.maxRuns ?? DEFAULT_MAX_CLIP_RUNS, 'runs', ` of ${doc.settings.clipping.minRunSamples}+ samples at or above ${fmt(doc.settings.clipping.thresholdDbfs, 2)} dBFS`);
    case 'silence-gap': return within('Longest silence inside the programme', s.longestInternalGapSeconds, undefined, rule.maxSeconds, 's', 's');
    case 'head-silence': return within('Silence before the programme', s.headSilenceSeconds, rule.minSeconds, rule.maxSeconds, 's', 's');
    case 'tail-silence': return within('Silence after the programme', s.tailSilenceSeconds, rule.minSeconds, rule.maxSeconds, 's', 's');
    case 'dead-channel': {
      const dead = s.deadChannels;
      const passed = dead.length === 0;
      return { measured: dead, unit: 'channels', limit: { max: 0 }, outcome: verdictOf(passed), passed, explanation: passed ? 'No channel is digital silence throughout' : `Channel ${dead.map((c) => channelName(doc, c)).join(', ')} is digital silence throughout` };
    }
    case 'duplicate-channels': case 'inverted-channels': {
      const dead = new Set(s.deadChannels);
      const inverted = rule.type === 'inverted-channels';
      const hits = doc.channelPairs.filter((p) => !dead.has(p.channel) && !dead.has(p.otherChannel) && (inverted ? p.inverted || p.nearInverted : p.identical || p.nearIdentical));
      const names = hits.map((p) => `${channelName(doc, p.otherChannel)}${inverted ? ' = -' : ' = '}${channelName(doc, p.channel)}`);
      const passed = hits.length === 0;
      const what = inverted ? 'polarity-inverted copy' : 'duplicate';
      return { measured: names, unit: 'pairs', limit: { max: 0 }, outcome: verdictOf(passed), passed, explanation: passed ? `No channel is a ${what} of another` : `${hits.length} channel pair${hits.length > 1 ? 's are' : ' is a'} ${what}${hits.length > 1 ? 's' : ''}: ${names.join('; ')}` };
    }
    case 'phase': {
      const windows = doc.channelPairs.reduce((n, p) => n + p.phaseProblemWindows, 0);
      const lows = doc.channelPairs.map((p) => p.minWindowCorrelation).filter((r): r is number => r !== null);
      const detail = lows.length > 0 ? ` (lowest window correlation ${fmt(Math.min(...lows), 2)})` : '';
      return count(windows === 1 ? 'window of strongly negative correlation' : 'windows of strongly negative correlation', windows, rule.maxWindows ?? 0, 'windows', detail);
    }
    case 'dc-offset': {
      const values = doc.channels.map((c) => c.dcOffsetDbfs).filter((v): v is number => v !== null);
      return atMost('Largest DC offset', values.length > 0 ? Math.max(...values) : null, rule.maxDbfs, 'dBFS', 'no offset at all');
    }
    case 'sample-rate': return membership('Sample rate', doc.format.sampleRate, rule.allowedHz, 'Hz');
    case 'container': return membership('Container', doc.format.container, rule.allowed, null);
    case 'bit-depth': {
      const bits = doc.format.bitsPerSample;
      if (bits === null) return { measured: doc.format.encoding, unit: null, limit: { min: rule.minBits }, outcome: 'fail', passed: false, explanation: `Encoding ${doc.format.encoding} is lossy and has no bit depth; at least ${rule.minBits}-bit PCM is required` };
      return within('Bit depth', bits, rule.minBits, undefined, 'bits', 'bits');
    }
    case 'channels': {
      const labels = doc.format.channelLabels;
      const countOk = rule.count === undefined || doc.format.channels === rule.count;
      const layoutOk = rule.layout === undefined || (rule.layout.length === labels.length && rule.layout.every((l, i) => labels[i] === l));
      const passed = countOk && layoutOk;
      const layout = labels.join(' ');
      const wanted = [rule.count !== undefined ? `${rule.count} channels` : '', rule.layout ? `layout ${rule.layout.join(' ')}` : ''].filter(Boolean).join(', ');
      return { measured: labels, unit: null, limit: { ...(rule.count !== undefined ? { min: rule.count, max: rule.count } : {}), ...(rule.layout ? { allowed: rule.layout } : {}) }, outcome: verdictOf(passed), passed, explanation: `${doc.format.channels} channel${doc.format.channels === 1 ? '' : 's'} (${layout})${passed ? ' as required' : `, but ${wanted} required`}` };
    }
    case 'duration': return within('Duration', doc.format.durationSeconds ?? doc.format.framesDecoded / doc.format.sampleRate, rule.minSeconds, rule.maxSeconds, 's', 's');
  }
}

export function runCheck(rule: Rule, doc: AnalysisDocument): CheckResult {
  const { severity, ...draft } = draftFor(rule, doc);
  return { ruleId: rule.id, type: rule.type, severity: severity ?? rule.severity, source: rule.source ?? null, ...draft };
}
