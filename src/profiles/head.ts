// The head readings (analysis/head.ts) as the profile layer uses them: the silence before the
// programme, SMPTE labels of tone, pops and programme start, and timecode labels back to frames.
//
// Head silence: with a line-up tone and a programme start, the head-silence rule measures from the
// end of the last tone to the programme start (the lead-in, a sync pop inside it included), so a
// tone at the very top does not read as "no head silence". Without a tone it is the silence
// before the first sound, as before.

import { type AnalysisDocument, lineUpEndFrame } from '../engine/document.ts';
import { EarmarkError } from '../errors/index.ts';
import { type FrameRate, framesAtSample, timecodeAtSample } from './timecode.ts';

export interface HeadSilence {
  seconds: number;
  startSample: number;
  endSample: number;
}

export function headSilenceOf(doc: AnalysisDocument): HeadSilence {
  const rate = doc.format.sampleRate;
  const head = doc.head;
  if (head.toneSegments.length > 0 && head.programmeStartFrame !== null && head.toneGapSeconds !== null) {
    const endSample = head.programmeStartFrame;
    const startSample = Math.max(0, endSample - Math.round(head.toneGapSeconds * rate));
    return { seconds: head.toneGapSeconds, startSample, endSample };
  }
  const seconds = doc.summary.headSilenceSeconds;
  return { seconds, startSample: 0, endSample: Math.min(doc.format.framesDecoded, Math.round(seconds * rate)) };
}

/**
 * The line-up outside the programme, in samples: before the programme start when a tone or a head
 * pop was found, after the programme's end when a tail pop was. Its silences are the line-up's
 * own (tone, gap, pop, gap), not dropouts or dead air in the programme.
 */
export function lineUpSpans(doc: AnalysisDocument): { headEndSample: number | null; tailStartSample: number | null } {
  return {
    headEndSample: lineUpEndFrame(doc.head),
    tailStartSample: doc.head.tailPop !== null ? doc.head.programmeEndFrame : null,
  };
}

/** Whether a span lies wholly inside the line-up head or tail (lineUpSpans). */
export function inLineUp(doc: AnalysisDocument, span: { startFrame: number; endFrame: number }): boolean {
  const { headEndSample, tailStartSample } = lineUpSpans(doc);
  return (
    (headEndSample !== null && span.endFrame <= headEndSample) ||
    (tailStartSample !== null && span.startFrame >= tailStartSample)
  );
}

export interface HeadTimecode {
  toneStart: string | null;
  toneEnd: string | null;
  headPop: string | null;
  programmeStart: string | null;
  programmeEnd: string | null;
  tailPop: string | null;
}

/** SMPTE labels of the head's readings at the report's frame rate, from the BWF time reference. */
export function headTimecodeOf(doc: AnalysisDocument, rate: FrameRate): HeadTimecode {
  const sampleRate = doc.format.sampleRate;
  const origin = doc.format.timeReferenceSamples;
  const at = (sample: number | null | undefined) =>
    sample === null || sample === undefined ? null : timecodeAtSample(sample, sampleRate, rate, origin);
  const tones = doc.head.toneSegments;
  return {
    toneStart: at(tones.length > 0 ? Math.min(...tones.map((t) => t.startFrame)) : null),
    toneEnd: at(tones.length > 0 ? Math.max(...tones.map((t) => t.endFrame)) : null),
    headPop: at(doc.head.headPop?.startFrame),
    programmeStart: at(doc.head.programmeStartFrame),
    programmeEnd: at(doc.head.programmeEndFrame),
    tailPop: at(doc.head.tailPop?.startFrame),
  };
}

/** Frames since 00:00:00:00 of a label (SMPTE ST 12-1; drop-frame skips numbers as timecode.ts adds them). */
export function framesFromTimecode(label: string, rate: FrameRate): number {
  const m = /^(\d\d):(\d\d):(\d\d)[:;](\d\d)$/.exec(label);
  const [hh, mm, ss, ff] = m ? m.slice(1).map(Number) : [];
  if (hh === undefined || mm === undefined || ss === undefined || ff === undefined || ff >= rate.nominalFps) {
    throw new EarmarkError('invalid_argument', `"${label}" is not a timecode at ${rate.id} fps`, {
      field: 'atTimecode',
    });
  }
  const minutes = 60 * hh + mm;
  const dropped = rate.dropFrames * (minutes - Math.floor(minutes / 10));
  return (hh * 3600 + mm * 60 + ss) * rate.nominalFps + ff - dropped;
}

/** Frame index (counted from midnight with the file's time reference) of a sample of the file. */
export function frameOfSample(doc: AnalysisDocument, sample: number, rate: FrameRate): number {
  return framesAtSample(sample + (doc.format.timeReferenceSamples ?? 0), doc.format.sampleRate, rate);
}

/** The file's first sample inside frame `frame` (counted from midnight with the time reference); may be negative. */
export function sampleOfFrame(doc: AnalysisDocument, frame: number, rate: FrameRate): number {
  const num = BigInt(Math.floor(frame)) * BigInt(doc.format.sampleRate) * BigInt(rate.fpsDenominator);
  const den = BigInt(rate.fpsNumerator);
  const first = Number((num + den - 1n) / den);
  return first - (doc.format.timeReferenceSamples ?? 0);
}
