// `earmark` command line. Exit codes: 0 success (check: pass), 1 check warn, 2 check fail,
// 3 error (bad input, bad profile, bad arguments). Errors print "error <code>: <message>" on stderr.

import { parseCommandArgs, suggestion } from './args.ts';
import { LAYOUT_NAMES } from '../analysis/layouts.ts';
import type { AnalysisOptions } from '../analysis/runner.ts';
import { analyzeFile } from '../engine/analyze-file.ts';
import { ENGINE_VERSION } from '../engine/document.ts';
import { EarmarkError, toEarmarkError } from '../errors/index.ts';
import { checkCommand } from './check.ts';
import { compareCommand } from './compare.ts';
import { formatAnalysis } from './format-analysis.ts';
import { layoutOption } from './layout-option.ts';
import { packageCommand } from './package.ts';
import { profilesCommand } from './profiles.ts';
import { runSelftest } from './selftest.ts';
import { THREADS_FLAG, threadsOption } from './threads.ts';
import { watchCommand } from './watch.ts';

export const EXIT_ERROR = 3;

const COMMANDS = [
  'analyze',
  'check',
  'compare',
  'package',
  'profiles',
  'selftest',
  'watch',
  'help',
  'version',
] as const;

const USAGE = `usage:
  earmark analyze <file> [--json] [--all] [--true-peak-ceiling dBTP] [--clip-run N] [--clip-threshold dBFS]
                         [--silence-threshold dBFS] [--silence-min seconds] [--threads N|auto] [--layout name]
                         [--downmix] [--channel-loudness] [--dialogue] [--min-speech-share percent]
  earmark check <file> --profile <id|path.json> [--fps rate] [--layout name] [--json] [--all] [--threads N|auto]
                 [--csv flags.csv] [--junit summary.xml] [--junit-warn pass|failure|skipped] [--markers copy.wav]
      rate: 23.976 24 25 29.97-df 29.97-ndf 30 50 59.94-df 59.94-ndf 60 (default: the profile's)
      --layout: channel layout of a file without a channel mask or chna chunk: ${LAYOUT_NAMES.join(' ')}
  earmark check <files or folders...> --profile <id|path.json> [--jobs N] [--csv flags.csv] [--junit summary.xml]
      folders: their audio files, recursively; --jobs: files at a time (default: the cores)
  earmark compare <old report.json|file> <new report.json|file> [--profile <id|path.json>] [--json] [--all]
      an audio file is checked with --profile first; exit code: the new file's verdict
  earmark package --profile <id|path.json> --mix <file> --stem <file> [--stem <file>...] [--version <file>...]
                  [--stem-profile <id|path.json>] [--tolerance dB] [--fps rate] [--json] [--threads N|auto]
      stems must sum to the mix within --tolerance (default -60 dB residual relative to the mix)
  earmark watch <folder> --profile <id|path.json> [--settle-seconds s] [--jobs N] [--fps rate] [--layout name]
                         [--threads N|auto]
      checks each audio file once complete, writes <file>.report.json and moves both into passed/ warned/ failed/;
      runs until SIGINT/SIGTERM
  earmark profiles [id] [--json]
  earmark selftest [--json]
  earmark --version
exit codes: 0 ok (check: pass), 1 check: warn, 2 check: fail, 3 error (bad input, bad profile, bad arguments)`;

type Write = (text: string) => void;

export interface CliIo {
  stdout: Write;
  stderr: Write;
}

const defaultIo: CliIo = {
  stdout: (text) => process.stdout.write(text),
  stderr: (text) => process.stderr.write(text),
};

function numberOption(values: Record<string, unknown>, name: string): number | undefined {
  const raw = values[name];
  if (raw === undefined) return undefined;
  const value = Number(raw);
  if (typeof raw !== 'string' || raw.trim() === '' || !Number.isFinite(value)) {
    throw new EarmarkError('invalid_argument', `--${name} needs a number, got "${String(raw)}"`, { field: name });
  }
  return value;
}

export function analysisOptionsFromArgs(values: Record<string, unknown>): AnalysisOptions {
  const options: AnalysisOptions = {};
  const ceiling = numberOption(values, 'true-peak-ceiling');
  if (ceiling !== undefined) options.truePeak = { overCeilingDbtp: ceiling };
  const clipRun = numberOption(values, 'clip-run');
  const clipThreshold = numberOption(values, 'clip-threshold');
  if (clipRun !== undefined && (!Number.isInteger(clipRun) || clipRun < 1)) {
    throw new EarmarkError('invalid_argument', '--clip-run must be a whole number of samples >= 1', {
      field: 'clip-run',
    });
  }
  if (clipRun !== undefined || clipThreshold !== undefined) {
    options.clipping = {
      ...(clipRun !== undefined ? { minRunSamples: clipRun } : {}),
      ...(clipThreshold !== undefined ? { thresholdDbfs: clipThreshold } : {}),
    };
  }
  const silenceThreshold = numberOption(values, 'silence-threshold');
  const silenceMin = numberOption(values, 'silence-min');
  if (silenceMin !== undefined && silenceMin <= 0) {
    throw new EarmarkError('invalid_argument', '--silence-min must be above 0 seconds', { field: 'silence-min' });
  }
  if (silenceThreshold !== undefined || silenceMin !== undefined) {
    options.silence = {
      ...(silenceThreshold !== undefined ? { thresholdDbfs: silenceThreshold } : {}),
      ...(silenceMin !== undefined ? { minDurationSeconds: silenceMin } : {}),
    };
  }
  // Fold-down readings cost extra K-weighting passes: only when asked.
  if (values.downmix === true || values['channel-loudness'] === true)
    options.downmix = { enabled: true, ...(values['channel-loudness'] === true ? { channelLoudness: true } : {}) };
  // The speech detector is a model inference per 32 ms: only when asked.
  const minSpeechShare = numberOption(values, 'min-speech-share');
  if (minSpeechShare !== undefined && !(minSpeechShare > 0 && minSpeechShare <= 100))
    throw new EarmarkError('invalid_argument', '--min-speech-share must lie above 0 and at most 100 percent', {
      field: 'min-speech-share',
    });
  if (values.dialogue === true || minSpeechShare !== undefined)
    options.speech = {
      enabled: true,
      ...(minSpeechShare !== undefined ? { minimumSharePercent: minSpeechShare } : {}),
    };
  return options;
}

const ANALYSIS_FLAGS = {
  json: { type: 'boolean' },
  all: { type: 'boolean' },
  'true-peak-ceiling': { type: 'string' },
  'clip-run': { type: 'string' },
  'clip-threshold': { type: 'string' },
  'silence-threshold': { type: 'string' },
  'silence-min': { type: 'string' },
  layout: { type: 'string' },
  downmix: { type: 'boolean' },
  'channel-loudness': { type: 'boolean' },
  dialogue: { type: 'boolean' },
  'min-speech-share': { type: 'string' },
} as const;

async function analyzeCommand(args: string[], io: CliIo): Promise<number> {
  const { values, positionals } = parseCommandArgs(args, { ...ANALYSIS_FLAGS, ...THREADS_FLAG });
  if (positionals.length !== 1) throw new EarmarkError('invalid_argument', 'analyze needs exactly one file');
  const threads = threadsOption(values.threads);
  const layout = layoutOption(values);
  const document = await analyzeFile(positionals[0], {
    analysis: analysisOptionsFromArgs(values),
    threads,
    ...(layout ? { decode: { layout } } : {}),
  });
  io.stdout(values.json ? `${JSON.stringify(document)}\n` : formatAnalysis(document, { all: values.all === true }));
  return 0;
}

export async function main(argv: string[], io: CliIo = defaultIo): Promise<number> {
  const [command, ...rest] = argv;
  try {
    switch (command) {
      case 'analyze':
        return await analyzeCommand(rest, io);
      case 'check':
        return await checkCommand(rest, io);
      case 'compare':
        return await compareCommand(rest, io);
      case 'package':
        return await packageCommand(rest, io);
      case 'profiles':
        return profilesCommand(rest, io);
      case 'watch':
        return await watchCommand(rest, io);
      case 'selftest':
        return runSelftest(rest, io);
      case '--version':
      case 'version':
        io.stdout(`earmark ${ENGINE_VERSION}\n`);
        return 0;
      case undefined:
      case 'help':
      case '--help':
      case '-h':
        io.stdout(`${USAGE}\n`);
        return command === undefined ? EXIT_ERROR : 0;
      default: {
        const near = suggestion(command, COMMANDS);
        const hint = near ? ` (did you mean "${near}"?)` : '';
        throw new EarmarkError('invalid_argument', `unknown command "${command}"${hint}\n${USAGE}`);
      }
    }
  } catch (thrown) {
    const error = isArgsError(thrown) ? new EarmarkError('invalid_argument', thrown.message) : toEarmarkError(thrown);
    io.stderr(`error ${error.code}: ${error.message}\n`);
    return EXIT_ERROR;
  }
}

/** node:util parseArgs throws TypeErrors with ERR_PARSE_ARGS_* codes for unknown or malformed flags. */
function isArgsError(value: unknown): value is Error {
  const code = (value as { code?: unknown } | null)?.code;
  return value instanceof Error && typeof code === 'string' && code.startsWith('ERR_PARSE_ARGS');
}
