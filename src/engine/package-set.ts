// The checks a delivery package needs across its files: one sample rate, one bit depth, one
// length to the sample, stems with the mix's channel count, and stems that sum to the mix. All
// members are decoded in lockstep, a fixed number of frames at a time, so memory stays one block
// per member whatever the files' lengths.

import { setImmediate as nextTurn } from 'node:timers/promises';
import {
  DEFAULT_RESIDUAL_TOLERANCE_DB,
  DEFAULT_RESIDUAL_WINDOW_SECONDS,
  StemResidualMeter,
  type ResidualResult,
} from '../analysis/stem-residual.ts';
import { openAudioFile } from '../decode/index.ts';
import {
  DEFAULT_MAX_DECODED_SECONDS,
  type AudioFormat,
  type DecodedAudio,
  type DecodeOptions,
} from '../decode/types.ts';
import { EarmarkError, toEarmarkError } from '../errors/index.ts';
import { FrameReader } from './frame-reader.ts';

export type PackageRole = 'mix' | 'stem' | 'version';
export const PACKAGE_ROLES: readonly PackageRole[] = ['mix', 'stem', 'version'];

export interface PackageMemberInput {
  path: string;
  role: PackageRole;
  /** Name to report (default: the path as given). */
  name?: string;
  /** This member's decode options (its profile's declared layout), over the set's. */
  decode?: DecodeOptions;
}

export interface SetMember {
  name: string;
  role: PackageRole;
  container: string;
  encoding: string;
  sampleRate: number;
  channels: number;
  channelLabels: string[];
  bitsPerSample: number | null;
  /** e.g. "24-bit", "32-bit float", "lossy (mp3)". */
  depth: string;
  /** Frames decoded, to the sample. */
  frames: number;
  durationSeconds: number;
}

export type SetCheckId = 'same_sample_rate' | 'same_bit_depth' | 'same_length' | 'stem_channels' | 'stems_sum_to_mix';

export interface SetCheck {
  id: SetCheckId;
  passed: boolean;
  /** Plain words with units; names the members that differ. */
  explanation: string;
}

export interface PackageSetResult {
  members: SetMember[];
  checks: SetCheck[];
  /** Stems against the mix; null without stems and a mix, or when they cannot be summed (`residualSkipped` says why). */
  residual: ResidualResult | null;
  residualSkipped: string | null;
  toleranceDb: number;
}

export interface PackageSetOptions {
  toleranceDb?: number;
  windowSeconds?: number;
  decode?: DecodeOptions;
  signal?: AbortSignal;
  /** Called after each step with the most frames any member has given so far (progress, memory tests). */
  onStep?: (frames: number) => void;
}

/** Frames read per member per step. */
const STEP_FRAMES = 16_384;

/** Roles must make a package: at most one mix, stems only with a mix, at least two files. */
export function assertPackageShape(members: readonly Pick<PackageMemberInput, 'role'>[]): void {
  const count = (role: PackageRole) => members.filter((m) => m.role === role).length;
  if (count('mix') > 1)
    throw new EarmarkError('invalid_argument', 'a package has at most one mix', { field: 'mix', mixes: count('mix') });
  if (count('stem') > 0 && count('mix') === 0)
    throw new EarmarkError('invalid_argument', 'stems need a mix to sum against', { field: 'mix' });
  if (members.length < 2)
    throw new EarmarkError('invalid_argument', 'a package needs at least two files (a mix and stems, or versions)', {
      field: 'members',
    });
}

function depthLabel(format: AudioFormat): string {
  if (format.bitsPerSample === null) return `lossy (${format.encoding})`;
  return format.encoding.startsWith('pcm_f') ? `${format.bitsPerSample}-bit float` : `${format.bitsPerSample}-bit`;
}

const seconds = (frames: number, rate: number) => `${(frames / rate).toFixed(6)} s`;

/** One check that every member agrees with the reference on `value`. */
function sameCheck(
  id: SetCheckId,
  members: readonly SetMember[],
  reference: SetMember,
  value: (m: SetMember) => string | number,
  describe: (m: SetMember) => string,
  what: string,
): SetCheck {
  const differ = members.filter((m) => value(m) !== value(reference));
  if (differ.length === 0)
    return { id, passed: true, explanation: `all ${members.length} files: ${describe(reference)}` };
  const list = differ.map((m) => `${m.name} ${describe(m)}`).join('; ');
  return { id, passed: false, explanation: `${what} differs from ${reference.name} (${describe(reference)}): ${list}` };
}

function lengthDescription(m: SetMember): string {
  return `${m.frames} samples (${seconds(m.frames, m.sampleRate)})`;
}

function lengthCheck(members: readonly SetMember[], reference: SetMember): SetCheck {
  const check = sameCheck('same_length', members, reference, (m) => m.frames, lengthDescription, 'length');
  if (check.passed) return check;
  const diffs = members
    .filter((m) => m.frames !== reference.frames)
    .map((m) => {
      const d = m.frames - reference.frames;
      return `${m.name} ${Math.abs(d)} sample${Math.abs(d) === 1 ? '' : 's'} ${d < 0 ? 'shorter' : 'longer'}`;
    });
  return { ...check, explanation: `${check.explanation} (${diffs.join('; ')})` };
}

/** A decode error names the member it came from. */
function named(name: string, thrown: unknown): EarmarkError {
  const error = toEarmarkError(thrown);
  return new EarmarkError(error.code, `${name}: ${error.message}`, { ...error.details, member: name });
}

async function readNamed(name: string, reader: FrameReader): Promise<number> {
  try {
    return await reader.read();
  } catch (thrown) {
    throw named(name, thrown);
  }
}

async function openMember(member: PackageMemberInput, decode: DecodeOptions | undefined) {
  const name = member.name ?? member.path;
  try {
    return { name, audio: await openAudioFile(member.path, { ...decode, ...member.decode }) };
  } catch (thrown) {
    throw named(name, thrown);
  }
}

export async function checkPackageSet(
  inputs: readonly PackageMemberInput[],
  options: PackageSetOptions = {},
): Promise<PackageSetResult> {
  assertPackageShape(inputs);
  // An opened stream holds no file handle until iterated (decode/index.ts): a member that fails
  // to open leaves nothing open behind it.
  const opened: OpenedMember[] = [];
  for (const input of inputs) {
    const { name, audio } = await openMember(input, options.decode);
    opened.push({ name, role: input.role, audio });
  }
  return checkOpenedSet(opened, options);
}

export interface OpenedMember {
  name: string;
  role: PackageRole;
  audio: DecodedAudio;
}

/** The set check over streams already opened (files, or generated streams in tests). */
export async function checkOpenedSet(
  members: readonly OpenedMember[],
  options: PackageSetOptions = {},
): Promise<PackageSetResult> {
  assertPackageShape(members);
  const toleranceDb = options.toleranceDb ?? DEFAULT_RESIDUAL_TOLERANCE_DB;
  if (!Number.isFinite(toleranceDb) || toleranceDb >= 0)
    throw new EarmarkError('invalid_argument', 'the residual tolerance must be a number of dB below 0', {
      field: 'tolerance',
    });
  const windowSeconds = options.windowSeconds ?? DEFAULT_RESIDUAL_WINDOW_SECONDS;
  // Two numbers are kept per window: 10 ms windows bound that to 1.6 kB per second of audio.
  if (!(windowSeconds >= 0.01 && windowSeconds <= 60))
    throw new EarmarkError('invalid_argument', 'the residual window must lie from 0.01 to 60 seconds', {
      field: 'windowSeconds',
    });
  const opened = members.map((m) => ({ name: m.name, reader: new FrameReader(m.audio, STEP_FRAMES) }));
  try {
    const mixIndex = members.findIndex((m) => m.role === 'mix');
    const stemIndexes = members.flatMap((m, i) => (m.role === 'stem' ? [i] : []));
    const format = (i: number) => opened[i].reader.audio.format;
    let residualSkipped: string | null = null;
    if (mixIndex >= 0 && stemIndexes.length > 0) {
      const mix = format(mixIndex);
      // Channels are summed by position: only stems with the mix's rate and channel order can be.
      const shape = (f: AudioFormat) => `${f.sampleRate} Hz, ${f.channels} ch ${f.channelLabels.join(' ')}`;
      const odd = stemIndexes.find((i) => shape(format(i)) !== shape(mix));
      if (odd !== undefined)
        residualSkipped = `${opened[odd].name} (${shape(format(odd))}) cannot be summed with ${opened[mixIndex].name} (${shape(mix)})`;
    } else residualSkipped = 'the package has no stems and mix to sum';
    const summing = residualSkipped === null;
    const meter = summing
      ? new StemResidualMeter(
          format(mixIndex).channels,
          Math.max(1, Math.round(windowSeconds * format(mixIndex).sampleRate)),
          // A header may claim any length: presize no further than the decode cap allows.
          Math.min(
            format(mixIndex).frames ?? 0,
            (options.decode?.maxDecodedSeconds ?? DEFAULT_MAX_DECODED_SECONDS) * format(mixIndex).sampleRate,
          ),
        )
      : null;
    let residualOpen = summing;
    while (opened.some((o) => !o.reader.done)) {
      if (options.signal?.aborted) throw new EarmarkError('cancelled', 'the package check was cancelled');
      const counts: number[] = [];
      for (const o of opened) counts.push(o.reader.done ? 0 : await readNamed(o.name, o.reader));
      if (meter && residualOpen) {
        // Sum over the length all stems and the mix share; a length mismatch is its own check.
        const common = Math.min(counts[mixIndex], ...stemIndexes.map((i) => counts[i]));
        if (common > 0)
          meter.push(
            stemIndexes.map((i) => opened[i].reader.channelData),
            opened[mixIndex].reader.channelData,
            common,
          );
        if (common < STEP_FRAMES) residualOpen = false;
      }
      options.onStep?.(Math.max(...counts.map((_, i) => opened[i].reader.framesRead)));
      // Decoding reads synchronously: a turn per step lets aborts and timers run.
      await nextTurn();
    }
    const result: SetMember[] = opened.map(({ name, reader }, i) => {
      const f = reader.audio.format;
      return {
        name,
        role: members[i].role,
        container: f.container,
        encoding: f.encoding,
        sampleRate: f.sampleRate,
        channels: f.channels,
        channelLabels: [...f.channelLabels],
        bitsPerSample: f.bitsPerSample,
        depth: depthLabel(f),
        frames: reader.framesRead,
        durationSeconds: reader.framesRead / f.sampleRate,
      };
    });
    const residual = meter ? meter.result(toleranceDb) : null;
    return {
      members: result,
      checks: setChecks(result, mixIndex, residual, residualSkipped),
      residual,
      residualSkipped,
      toleranceDb,
    };
  } finally {
    await Promise.all(opened.map((o) => o.reader.close().catch(() => undefined)));
  }
}

function setChecks(
  members: readonly SetMember[],
  mixIndex: number,
  residual: ResidualResult | null,
  residualSkipped: string | null,
): SetCheck[] {
  const reference = members[Math.max(0, mixIndex)];
  const checks: SetCheck[] = [
    sameCheck(
      'same_sample_rate',
      members,
      reference,
      (m) => m.sampleRate,
      (m) => `${m.sampleRate} Hz`,
      'sample rate',
    ),
    sameCheck(
      'same_bit_depth',
      members,
      reference,
      (m) => m.depth,
      (m) => m.depth,
      'bit depth',
    ),
    lengthCheck(members, reference),
  ];
  const stems = members.filter((m) => m.role === 'stem');
  if (stems.length === 0) return checks;
  checks.push(
    sameCheck(
      'stem_channels',
      [reference, ...stems],
      reference,
      (m) => `${m.channels} ch ${m.channelLabels.join(' ')}`,
      (m) => `${m.channels} ch ${m.channelLabels.join(' ')}`,
      'channel count or order',
    ),
  );
  checks.push(sumCheck(residual, residualSkipped, reference));
  return checks;
}

function sumCheck(residual: ResidualResult | null, skipped: string | null, mix: SetMember): SetCheck {
  const id = 'stems_sum_to_mix';
  if (!residual) return { id, passed: false, explanation: `not measurable: ${skipped ?? 'no residual'}` };
  const db = (v: number | null) => (v === null ? 'digital silence' : `${v.toFixed(1)} dB`);
  const peak = residual.residualPeakDbfs === null ? 'none' : `${residual.residualPeakDbfs.toFixed(1)} dBFS`;
  const level = `residual ${db(residual.residualRelativeDb)} relative to the mix, peak ${peak}, tolerance ${residual.toleranceDb} dB`;
  const over = residual.spansTotal > 0 ? `; over tolerance in ${residual.spansTotal} span(s)` : '';
  const worse = residual.channels.filter(
    (c) => c.residualRelativeDb !== null && c.residualRelativeDb > residual.toleranceDb,
  );
  const channels =
    worse.length > 0
      ? `; channels over: ${worse.map((c) => mix.channelLabels[c.channel] ?? c.channel + 1).join(', ')}`
      : '';
  const shared =
    residual.frames < mix.frames
      ? ` (over the first ${residual.frames} samples, which every stem and the mix have)`
      : '';
  return { id, passed: residual.withinTolerance, explanation: `${level}${over}${channels}${shared}` };
}
