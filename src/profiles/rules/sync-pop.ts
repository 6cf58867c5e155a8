// A sync pop at the head (offsetSeconds before the programme's first frame, or at a timecode) or
// at the tail (offsetSeconds after the programme's last sound), judged in whole frames at the
// report's frame rate. An offset counts label frames (2 s = 60 frames at 29.97), as picture does.
import type { AnalysisDocument } from '../../engine/document.ts';
import { frameOfSample, framesFromTimecode } from '../head.ts';
import { timecodeFromFrames, type FrameRate } from '../timecode.ts';
import type { SyncPopRule } from '../types.ts';
import { notMeasurable, verdictOf } from './drafts.ts';
import type { Draft, RuleSpec } from './rule-spec.ts';

/** Common practice: one frame of 1 kHz 2 s before the first frame of action (and 2 s after the last). */
export const DEFAULT_POP_OFFSET_SECONDS = 2;
export const DEFAULT_POP_TOLERANCE_FRAMES = 1;

/** A label's frame, or null when the label does not exist at this rate (frame 25 at 25 fps, a dropped number). */
function labelFrame(label: string, rate: FrameRate): number | null {
  try {
    const frame = framesFromTimecode(label, rate);
    const plain = (text: string) => text.replace(';', ':');
    return plain(timecodeFromFrames(frame, rate)) === plain(label) ? frame : null;
  } catch {
    return null;
  }
}

/** The frame the rule expects the pop to start in, or why there is none. */
export function expectedFrame(rule: SyncPopRule, doc: AnalysisDocument, rate: FrameRate): number | string {
  const offsetFrames = Math.round((rule.offsetSeconds ?? DEFAULT_POP_OFFSET_SECONDS) * rate.nominalFps);
  if (rule.position === 'tail') {
    const end = doc.head.programmeEndFrame;
    return end === null ? 'no tail pop after the programme' : frameOfSample(doc, end, rate) + offsetFrames;
  }
  if (rule.atTimecode !== undefined) {
    const frame = labelFrame(rule.atTimecode, rate);
    return frame ?? `${rule.atTimecode} is not a timecode at ${rate.id} fps`;
  }
  const start = doc.head.programmeStartFrame;
  return start === null ? 'no programme start' : frameOfSample(doc, start, rate) - offsetFrames;
}

function check(rule: SyncPopRule, doc: AnalysisDocument, rate: FrameRate): Draft {
  const tolerance = rule.toleranceFrames ?? DEFAULT_POP_TOLERANCE_FRAMES;
  const limit = { min: -tolerance, max: tolerance };
  const tail = rule.position === 'tail';
  const what = tail ? 'Tail sync pop' : 'Head sync pop';
  const pop = tail ? doc.head.tailPop : doc.head.headPop;
  const expected = expectedFrame(rule, doc, rate);
  if (pop === null) {
    const where = typeof expected === 'number' ? ` (expected at ${timecodeFromFrames(expected, rate)})` : '';
    return {
      measured: null,
      unit: 'frames',
      limit,
      outcome: 'fail',
      passed: false,
      explanation: `${what} not found${where}`,
    };
  }
  if (typeof expected === 'string') return notMeasurable(what, 'frames', limit, expected, false);
  const found = frameOfSample(doc, pop.startFrame, rate);
  const off = found - expected;
  const passed = Math.abs(off) <= tolerance;
  const at = `${timecodeFromFrames(found, rate)} (${Math.round(pop.frequencyHz)} Hz)`;
  return {
    measured: off,
    unit: 'frames',
    limit,
    outcome: verdictOf(passed),
    passed,
    explanation:
      off === 0
        ? `${what} at ${at}, on the expected frame`
        : `${what} at ${at}, ${Math.abs(off)} frame${Math.abs(off) === 1 ? '' : 's'} ${off < 0 ? 'early' : 'late'} against ${timecodeFromFrames(expected, rate)}${passed ? ` (within ${tolerance})` : ` (at most ${tolerance} allowed)`}`,
  };
}

export const syncPop: RuleSpec<SyncPopRule> = {
  check: (rule, doc, context) => check(rule, doc, context.frameRate),
  issues: (rule, at) =>
    rule.position === 'tail' && rule.atTimecode !== undefined
      ? [
          {
            field: `${at}.atTimecode`,
            message: `${at}.atTimecode is for the head pop; a tail pop is placed by offsetSeconds`,
          },
        ]
      : [],
};
