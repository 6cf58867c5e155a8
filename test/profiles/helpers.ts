// Generated test files: stereo 1 kHz tones (Tech 3341 case 1 style: a stereo sine at P dBFS peak
// reads P LUFS), optionally edited (clips, drop-outs) at exact sample positions, written as WAV.

import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { writeWavFile } from '../../src/encode/wav.ts';
import {
  analysisOptionsForProfile,
  evaluate,
  type EvaluateOptions,
  type Profile,
  type QcReport,
} from '../../src/profiles/index.ts';
import { toneBlocks, type ToneSegment } from '../../src/selftest/signals.ts';

export const SAMPLE_RATE = 48000;

export interface ToneFile {
  segments: ToneSegment[];
  channels?: number;
  /** Called per block with the block's first frame: edit samples in place. */
  edit?: (channelData: Float32Array[], startFrame: number) => void;
  timeReferenceSamples?: number;
  bitsPerSample?: 16 | 24 | 32;
}

export function tempDir(): { dir: string; cleanup: () => void } {
  const dir = mkdtempSync(join(tmpdir(), 'earmark-profiles-'));
  return { dir, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

let counter = 0;

export async function writeTone(dir: string, spec: ToneFile): Promise<string> {
  const path = join(dir, `tone-${++counter}.wav`);
  const bits = spec.bitsPerSample ?? 32;
  function* blocks() {
    let start = 0;
    for (const block of toneBlocks({
      sampleRate: SAMPLE_RATE,
      channels: spec.channels ?? 2,
      segments: spec.segments,
    })) {
      const data = [...block.channelData];
      spec.edit?.(data, start);
      start += block.frames;
      yield data;
    }
  }
  await writeWavFile(
    path,
    {
      sampleRate: SAMPLE_RATE,
      channels: spec.channels ?? 2,
      bitsPerSample: bits,
      float: bits === 32,
      ...(spec.timeReferenceSamples !== undefined ? { timeReferenceSamples: spec.timeReferenceSamples } : {}),
    },
    blocks(),
  );
  return path;
}

export async function checkFile(path: string, profile: Profile, options: EvaluateOptions = {}): Promise<QcReport> {
  const document = await analyzeFile(path, { analysis: analysisOptionsForProfile(profile) });
  return evaluate(profile, document, options);
}

/** Sets samples [from, to) of the given channels to a constant (a flat clip or a drop-out). */
export function setRange(from: number, to: number, value: number, channels: number[] = [0, 1]) {
  return (channelData: Float32Array[], startFrame: number) => {
    for (const c of channels) {
      const data = channelData[c];
      for (let f = Math.max(from, startFrame); f < Math.min(to, startFrame + data.length); f++)
        data[f - startFrame] = value;
    }
  };
}

export const checkOf = (report: QcReport, ruleId: string) => {
  const check = report.checks.find((c) => c.ruleId === ruleId);
  if (!check) throw new Error(`no check ${ruleId}`);
  return check;
};
