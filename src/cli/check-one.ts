// One file through the engine and a profile into its QC report: what `earmark check` does for a
// file, kept apart so other commands (a watch folder, a batch's child) reuse it unchanged.
import type { LayoutName } from '../analysis/layouts.ts';
import { analyzeFile } from '../engine/analyze-file.ts';
import type { ThreadChoice } from '../engine/thread-plan.ts';
import {
  analysisOptionsForProfile,
  decodeOptionsForProfile,
  evaluate,
  type FrameRateId,
  type Profile,
  type QcReport,
} from '../profiles/index.ts';

export interface CheckOneOptions {
  /** Timecode rate of the report; default the profile's. */
  fps?: FrameRateId;
  /** Overrides the profile's declared layout for a file that names no channels. */
  layout?: LayoutName;
  threads?: ThreadChoice;
}

export async function checkOneFile(path: string, profile: Profile, options: CheckOneOptions = {}): Promise<QcReport> {
  const document = await analyzeFile(path, {
    analysis: analysisOptionsForProfile(profile),
    decode: options.layout ? { layout: options.layout } : decodeOptionsForProfile(profile),
    threads: options.threads ?? 'auto',
  });
  return evaluate(profile, document, options.fps ? { frameRate: options.fps } : {});
}
