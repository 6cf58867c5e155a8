// One check per rule. Policy for missing measurements (documented in README.md): integrated
// loudness that cannot be measured fails its rule (a delivery must have a measurable programme);
// every other rule passes with a "not measurable" note (no short-term max in a 2 s file is not a breach).

import type { AnalysisDocument } from '../engine/document.ts';
import { fmt, fmtAgainst, fmtGap, fmtLimit } from './format.ts';
import type { CheckLimit, CheckResult } from './report.ts';
import { DEFAULT_MAX_CLIP_RUNS, type IntegratedLoudnessRule, type Rule } from './types.ts';

type Draft = Omit<CheckResult, 'ruleId' | 'type' | 'severity' | 'source'>;

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

function integrated(rule: IntegratedLoudnessRule, value: number | null): Draft {
  const hasTarget = rule.targetLufs !== undefined && rule.toleranceLu !== undefined;
  const limit: CheckLimit = hasTarget ? { targetLufs: rule.targetLufs, toleranceLu: rule.toleranceLu } : { ...(rule.minLufs !== undefined ? { min: rule.minLufs } : {}), ...(rule.maxLufs !== undefined ? { max: rule.maxLufs } : {}), ...(rule.targetLufs !== undefined ? { targetLufs: rule.targetLufs } : {}) };
  if (value === null) return notMeasurable('Integrated loudness', 'LUFS', limit, 'no 400 ms block above the -70 LUFS absolute gate', false);
  if (!hasTarget) return { ...within('Integrated loudness', value, rule.minLufs, rule.maxLufs, 'LUFS', 'LU'), limit };
  const target = rule.targetLufs as number;
  const tolerance = rule.toleranceLu as number;
  const deviation = value - target;
  const passed = Math.abs(deviation) <= tolerance;
  const side = deviation > 0 ? 'above' : 'below';
  const gap = Math.abs(deviation);
  const gapText = fmtAgainst(gap, tolerance);
  const explanation = passed && fmt(gap) === '0.0'
    ? `Integrated loudness ${fmt(value)} LUFS is on the ${fmtLimit(target)} LUFS target (tolerance ±${fmt(tolerance)} LU)`
    : `Integrated loudness ${fmt(value)} LUFS is ${gapText} LU ${side} the ${fmtLimit(target)} LUFS target (tolerance ±${fmt(tolerance)} LU)`;
  return { measured: value, unit: 'LUFS', limit, outcome: verdictOf(passed), passed, explanation };
}

const label = (doc: AnalysisDocument, c: number) => `${c + 1} (${doc.channels[c]?.label ?? 'unknown'})`;

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
    case 'integrated-loudness': return integrated(rule, s.integratedLufs);
    case 'true-peak': return atMost('True peak', s.truePeakDbtp, rule.maxDbtp, 'dBTP', 'digital silence');
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
      return { measured: dead, unit: 'channels', limit: { max: 0 }, outcome: verdictOf(passed), passed, explanation: passed ? 'No channel is digital silence throughout' : `Channel ${dead.map((c) => label(doc, c)).join(', ')} is digital silence throughout` };
    }
    case 'duplicate-channels': case 'inverted-channels': {
      const dead = new Set(s.deadChannels);
      const inverted = rule.type === 'inverted-channels';
      const hits = doc.channelPairs.filter((p) => !dead.has(p.channel) && !dead.has(p.otherChannel) && (inverted ? p.inverted || p.nearInverted : p.identical || p.nearIdentical));
      const names = hits.map((p) => `${label(doc, p.otherChannel)}${inverted ? ' = -' : ' = '}${label(doc, p.channel)}`);
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
  return { ruleId: rule.id, type: rule.type, severity: rule.severity, source: rule.source ?? null, ...draftFor(rule, doc) };
}
