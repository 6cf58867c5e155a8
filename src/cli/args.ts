// Command-line argument helpers shared by the commands.
import { parseArgs, type ParseArgsConfig } from 'node:util';

type Options = NonNullable<ParseArgsConfig['options']>;

const NEGATIVE_NUMBER = /^-(\d|\.\d)/;

/**
 * node:util parseArgs takes "-50" after "--silence-threshold" for a flag and refuses it; the
 * help shows the space form, so a negative number after a flag that takes a value is joined to
 * it ("--silence-threshold=-50") before parsing.
 */
export function joinNegativeValues(args: readonly string[], options: Options): string[] {
  const takesValue = new Set(
    Object.entries(options)
      .filter(([, o]) => o.type === 'string')
      .flatMap(([name, o]) => [`--${name}`, ...(o.short ? [`-${o.short}`] : [])]),
  );
  const out: string[] = [];
  for (let i = 0; i < args.length; i++) {
    const next = args[i + 1];
    if (takesValue.has(args[i]) && next !== undefined && NEGATIVE_NUMBER.test(next)) {
      out.push(`${args[i]}=${next}`);
      i++;
    } else out.push(args[i]);
  }
  return out;
}

/** parseArgs, strict, with positionals, after joinNegativeValues. */
export function parseCommandArgs<O extends Options>(args: readonly string[], options: O) {
  return parseArgs({ args: joinNegativeValues(args, options), options, allowPositionals: true, strict: true });
}

/** Levenshtein distance (insertions, deletions, substitutions), for "did you mean". */
function distance(a: string, b: string): number {
  let previous = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    const row = [i];
    for (let j = 1; j <= b.length; j++)
      row.push(Math.min(previous[j] + 1, row[j - 1] + 1, previous[j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1)));
    previous = row;
  }
  return previous[b.length];
}

/** The known word closest to `typed`, when it is close enough to be a slip (at most 2 edits). */
export function suggestion(typed: string, known: readonly string[]): string | null {
  let best: string | null = null;
  let bestDistance = 3;
  for (const word of known) {
    const d = distance(typed.toLowerCase(), word);
    if (d < bestDistance) {
      best = word;
      bestDistance = d;
    }
  }
  return best;
}
