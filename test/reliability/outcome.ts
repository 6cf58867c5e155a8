// Classifies what one input did: a catalogue error, a clean analysis, or an analysis with
// warnings. Anything else (untyped throw, non-finite numbers) is a failure the caller reports.
import type { CliIo } from '../../src/cli/main.ts';
import { main } from '../../src/cli/main.ts';
import type { DecodeOptions } from '../../src/decode/types.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { errorCatalogue, isEarmarkError } from '../../src/errors/index.ts';

export interface Outcome {
  /** 'ok', 'error:<code>', or 'untyped: ...' / 'non-finite: ...' for failures. */
  kind: string;
  warnings: string[];
  message?: string;
}

/** Paths to every number in `value` that is NaN or +-Infinity. */
export function nonFinitePaths(value: unknown, path = '$'): string[] {
  if (typeof value === 'number') return Number.isFinite(value) ? [] : [path];
  if (value === null || typeof value !== 'object') return [];
  return Object.entries(value).flatMap(([k, v]) => nonFinitePaths(v, `${path}.${k}`));
}

export async function analyzeOutcome(path: string, decode?: DecodeOptions): Promise<Outcome> {
  try {
    const doc = await analyzeFile(path, { decode, hash: false });
    const bad = nonFinitePaths(doc);
    if (bad.length) return { kind: `non-finite: ${bad.slice(0, 3).join(', ')}`, warnings: [] };
    return { kind: 'ok', warnings: doc.warnings.map((w) => w.code) };
  } catch (error) {
    if (isEarmarkError(error) && error.code in errorCatalogue) return { kind: `error:${error.code}`, warnings: [], message: error.message };
    return { kind: `untyped: ${error instanceof Error ? `${error.name}: ${error.message}` : String(error)}`, warnings: [] };
  }
}

export interface CliOutcome extends Outcome {
  exitCode: number;
  stdout: string;
  stderr: string;
}

export async function cliOutcome(path: string): Promise<CliOutcome> {
  let stdout = '';
  let stderr = '';
  const io: CliIo = { stdout: (t) => { stdout += t; }, stderr: (t) => { stderr += t; } };
  let exitCode: number;
  try {
    exitCode = await main(['analyze', path, '--json'], io);
  } catch (error) {
    return { kind: `untyped: main threw ${String(error)}`, warnings: [], exitCode: -1, stdout, stderr };
  }
  if (exitCode === 0) {
    if (/\bNaN\b|Infinity/.test(stdout)) return { kind: 'non-finite: in JSON text', warnings: [], exitCode, stdout, stderr };
    const doc = JSON.parse(stdout) as { warnings: { code: string }[] };
    return { kind: 'ok', warnings: doc.warnings.map((w) => w.code), exitCode, stdout, stderr };
  }
  const m = /^error ([a-z_]+): /.exec(stderr);
  return { kind: m ? `error:${m[1]}` : `untyped: exit ${exitCode}, stderr ${JSON.stringify(stderr)}`, warnings: [], exitCode, stdout, stderr };
}

/** Whether `o` is what `expected` ('ok', 'ok-with-warning:<code>', 'error:<code>') asks for. */
export function matches(o: Outcome, expected: string): boolean {
  if (expected === 'ok') return o.kind === 'ok' && o.warnings.length === 0;
  if (expected.startsWith('ok-with-warning:')) return o.kind === 'ok' && o.warnings.includes(expected.slice('ok-with-warning:'.length));
  return o.kind === expected;
}

export const describeOutcome = (o: Outcome): string => (o.kind === 'ok' && o.warnings.length ? `ok-with-warning:${o.warnings.join(',')}` : o.kind);
