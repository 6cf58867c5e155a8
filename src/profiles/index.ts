// Delivery profiles and QC reports: the public surface for the CLI and the API.
export { BUILTIN_PROFILES, builtinProfile, resolveProfile } from './builtins.ts';
export { correctionFor, evaluate, verdictOf, DEFAULT_FRAME_RATE, type EvaluateOptions } from './evaluate.ts';
export { DEFAULT_FLAG_MERGE_SECONDS, DEFAULT_MAX_FLAGS, type FlagOptions } from './flags.ts';
export { analysisOptionsForProfile, decodeOptionsForProfile } from './options.ts';
export type * from './report.ts';
export { REPORT_VERSION } from './report.ts';
export { loadProfileFile, parseProfile, profileIssues, profileSchema, type ProfileIssue } from './schema.ts';
export {
  FRAME_RATES,
  frameRate,
  framesAtSample,
  timecodeAtSample,
  timecodeFromFrames,
  type FrameRate,
} from './timecode.ts';
export type * from './types.ts';
export { FRAME_RATE_IDS } from './types.ts';
