// Dialogue-gated loudness: BS.1770 loudness of the 400 ms gating blocks the speech detector marks
// as speech, after the standard gates (ITU-R BS.1770-5 eqs. (4)-(7) over those blocks alone).
// A block is speech when more than half of the detector frames whose centres lie in it are.

import { gatedLufs, gatingBlocksFrom } from '../loudness.ts';
import type { SpeechResult } from './meter.ts';

/** ITU-R BS.1770-5 eq. (3): 400 ms blocks, one every 100 ms. */
const BLOCK_SECONDS = 0.4;
const BLOCK_STEP_SECONDS = 0.1;

export interface DialogueReading {
  /** Whether the detector ran (a profile or an option asked for it). */
  measured: boolean;
  detector: string | null;
  frameSeconds: number;
  threshold: number;
  /** Speech blocks over the programme's gating blocks, in percent; null when not measured. */
  speechSharePercent: number | null;
  minimumSharePercent: number;
  /** Enough speech for a dialogue reading (speechSharePercent >= minimumSharePercent). */
  measurable: boolean;
  /** Null when not measurable. */
  dialogueLufs: number | null;
  /** Programme minus dialogue loudness, LU (EBU R 128 s4's loudness-to-dialogue ratio). */
  loudnessToDialogueLu: number | null;
  speechBlocks: number;
  programmeBlocks: number;
  /** Where the programme's blocks start: after a line-up, as the integrated loudness. */
  fromSeconds: number;
  /** Why there is no dialogue reading, in plain words; null when there is one. */
  note: string | null;
}

/** One flag per gating block (block k starts at k * 100 ms), from the detector's frames. */
export function speechBlockMask(frameIsSpeech: Uint8Array, frameSeconds: number, blockCount: number): Uint8Array {
  // speechBefore[i]: speech frames among the first i.
  const speechBefore = new Uint32Array(frameIsSpeech.length + 1);
  for (let i = 0; i < frameIsSpeech.length; i++) speechBefore[i + 1] = speechBefore[i] + frameIsSpeech[i];
  const mask = new Uint8Array(blockCount);
  const firstCentreAtOrAfter = (seconds: number) =>
    Math.min(frameIsSpeech.length, Math.max(0, Math.ceil(seconds / frameSeconds - 0.5 - 1e-9)));
  for (let k = 0; k < blockCount; k++) {
    const from = firstCentreAtOrAfter(k * BLOCK_STEP_SECONDS);
    const to = firstCentreAtOrAfter(k * BLOCK_STEP_SECONDS + BLOCK_SECONDS);
    const count = to - from;
    mask[k] = count > 0 && 2 * (speechBefore[to] - speechBefore[from]) > count ? 1 : 0;
  }
  return mask;
}

export function dialogueReading(
  speech: SpeechResult,
  momentaryLufs: Float64Array,
  fromFrame: number,
  sampleRate: number,
  programmeLufs: number | null,
): DialogueReading {
  const base = {
    measured: speech.enabled,
    detector: speech.detector,
    frameSeconds: speech.frameSeconds,
    threshold: speech.threshold,
    minimumSharePercent: speech.minimumSharePercent,
    fromSeconds: fromFrame / sampleRate,
  };
  if (!speech.enabled)
    return {
      ...base,
      speechSharePercent: null,
      measurable: false,
      dialogueLufs: null,
      loudnessToDialogueLu: null,
      speechBlocks: 0,
      programmeBlocks: 0,
      note: 'not measured: no profile rule or option asked for the speech detector',
    };
  const { first, powers } = gatingBlocksFrom(momentaryLufs, fromFrame, sampleRate);
  const mask = speechBlockMask(speech.frameIsSpeech, speech.frameSeconds, first + powers.length).subarray(first);
  const speechPowers = powers.filter((_, k) => mask[k] === 1);
  const share = powers.length > 0 ? (100 * speechPowers.length) / powers.length : 0;
  const measurable = powers.length > 0 && share >= speech.minimumSharePercent;
  const dialogueLufs = measurable ? gatedLufs(speechPowers) : null;
  let note: string | null = null;
  if (powers.length === 0) note = 'the programme is shorter than one 400 ms gating block';
  else if (!measurable)
    note = `speech in ${share.toFixed(1)} % of the programme, under the ${speech.minimumSharePercent} % a dialogue reading needs`;
  else if (dialogueLufs === null) note = 'no speech block is above the -70 LUFS absolute gate';
  return {
    ...base,
    speechSharePercent: share,
    measurable: dialogueLufs !== null,
    dialogueLufs,
    loudnessToDialogueLu: dialogueLufs !== null && programmeLufs !== null ? programmeLufs - dialogueLufs : null,
    speechBlocks: speechPowers.length,
    programmeBlocks: powers.length,
    note,
  };
}
