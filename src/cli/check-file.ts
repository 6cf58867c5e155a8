// One file against one profile into its report, with no printing: shared by `check` and `watch`.
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

export interface CheckFileOptions {
  /** Overrides the profile's timecode rate. */
  fps?: FrameRateId;
  /** Overrides the profile's declared layout. */
  layout?: LayoutName;
  threads?: ThreadChoice;
}

export async function checkFile(path: string, profile: Profile, options: CheckFileOptions = {}): Promise<QcReport> {
  const document = await analyzeFile(path, {
    analysis: analysisOptionsForProfile(profile),
    decode: options.layout ? { layout: options.layout } : decodeOptionsForProfile(profile),
    threads: options.threads ?? 'auto',
  });
  return evaluate(profile, document, options.fps ? { frameRate: options.fps } : {});
}
