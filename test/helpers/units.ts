// The unit checker for the CLI's text output: every number carries its unit, or is a count with
// its noun beside it. It first blanks what is a name rather than a value (the allowlist below, each
// entry with its reason), skips the rows of the per-channel table (their units are in its header),
// then asks of every number left that a unit follows it, or a counted noun follows or precedes it.
// A list of numbers ending in one unit ("-40, -20 dBFS", "-24 to -22 LUFS") shares that unit.

import type { EventKind } from '../../src/analysis/events.ts';
import { FLAG_KINDS } from '../../src/profiles/flags.ts';

/** The analysis event kinds (src/analysis/events.ts); the compiler checks the list is whole. */
const EVENT_KIND_SET: Record<EventKind, true> = {
  clipping: true,
  dropout: true,
  silence: true,
  true_peak_over: true,
  reconstructed_over: true,
  dead_channel: true,
  duplicate_channel: true,
  inverted_channel: true,
  phase_problem: true,
  loud_short_term: true,
  loud_momentary: true,
  downmix_clipping: true,
};
const EVENT_KINDS = Object.keys(EVENT_KIND_SET);

/** Units as printed (after the number, with or without a space; "24-bit" joins with a hyphen). */
const UNITS = [
  'LUFS',
  'LU',
  'dBTP',
  'dBFS',
  'dB',
  's',
  'ms',
  'Hz',
  'kHz',
  'bit',
  '%',
  'ch',
  'channels',
  'fps',
  'bytes',
  'frames',
  'samples',
  'correlation',
  'FFS', // fraction of full scale (EBU Tech 3341 true-peak cases)
  'deg',
];
/** Nouns that make a number a count: "3 clip runs", "5 of 6 checks", "clipping 2" (a kind and its count). */
const COUNT_NOUNS = [
  'flags',
  'flag',
  'checks',
  'cases',
  'more',
  'fail',
  'warn',
  'remark',
  'clip',
  'times',
  'kept',
  'files',
  'file',
  'problems',
  'problem',
  'channel',
  'job',
  'jobs',
  'dropouts',
  'runs',
  // event and flag kinds, whose counts print after them ("clipping 2")
  ...EVENT_KINDS,
  ...Object.keys(FLAG_KINDS),
];

/** The per-channel table of `analyze`: its header names each column's unit or count (test/cli/units.test.ts asserts it prints). */
export const TABLE_HEADER =
  /^ {2}ch {2}label {2}peak dBFS {2}TP dBTP {3}RMS dBFS {2}crest dB {2}DC of FS {4}clip runs {2}dropouts$/;

/** Names, not values: blanked before the numbers are read. */
const ALLOWLIST: Array<[RegExp, string]> = [
  [/\b\d{4}-\d{2}-\d{2}T[\d:.]+Z/g, 'an ISO 8601 time (the watch log stamps each line)'],
  [/\b\d{2}:\d{2}:\d{2}[:;.]\d+/g, 'a timecode or clock time (its format is its unit)'],
  [/\b\d+\.\d+\.\d+\b/g, 'a version (profile, engine)'],
  [/\b\d{4}-\d+(\.\d+)?\b/g, 'an EBU Tech 3341/3342 case number (selftest ids)'],
  [/\b(R|Tech|BS\.|A\/|Annex|section|items?|TD|Table)\s?\d+(\.\d+)*(-\d+)?(:\d{4})?/g, 'a standard and its clause'],
  [/\(\d{4}\)/g, "a standard's year"],
  [/#\d+/g, "a flag's number"],
  [/\bch \d+ \S+( \/ \d+)?/g, 'a channel number and label, or a pair of them ("ch 1 L / 2 R")'],
  [/\b\d\.\d(\.\d)?(?= layout)/g, 'a channel layout name ("5.0 layout")'],
  [/\b\d+(\.\d+)?-n?df\b/g, 'a frame-rate id ("29.97-df"; fps follows it)'],
  [/\b\d+-bit\b/g, 'a bit depth ("24-bit": the unit joined by a hyphen)'],
];

const NUMBER = /(?<![\w.\-/])[-+±]?\d+(?:\.\d+)?(?:e[-+]?\d+)?(?![\w.])/g;
const escapeRegExp = (word: string) => word.replace(/[.*+?^${}()|[\]\\%]/g, '\\$&');
const UNIT_AFTER = new RegExp(`^\\s?(${UNITS.map(escapeRegExp).join('|')})(?![\\w])`);
const COUNT_AFTER = new RegExp(`^\\s(${COUNT_NOUNS.join('|')})\\b`);
const COUNT_BEFORE = new RegExp(`\\b(${COUNT_NOUNS.join('|')})\\s+$`);
/** "N of M checks", "-24 to -22 LUFS", "-40, -20 dBFS", "N ±T unit": the number shares the unit of what follows. */
const SHARED = /^(\s*(,|\.\.|to|of|and|\/)\s*[-+±]?\d+(\.\d+)?)+/;
const TOLERANCE = /^\s?±\d+(\.\d+)?/;

/** The lines of `text` holding a number with neither unit nor count noun, each with the number. */
export function unitless(text: string): string[] {
  const problems: string[] = [];
  let inTable = false;
  for (const line of text.split('\n')) {
    // Table rows, up to the blank line that ends the table: their units are in the header.
    if (TABLE_HEADER.test(line) || (inTable && line.trim() !== '')) {
      inTable = true;
      continue;
    }
    inTable = false;
    let blanked = line;
    for (const [pattern] of ALLOWLIST) blanked = blanked.replace(pattern, (m) => ' '.repeat(m.length));
    for (const match of blanked.matchAll(NUMBER)) {
      const at = match.index ?? 0;
      let after = blanked.slice(at + match[0].length);
      const before = blanked.slice(0, at);
      if (COUNT_BEFORE.test(before)) continue;
      // "3+ samples" is "3 or more samples".
      after = after.replace(SHARED, '').replace(TOLERANCE, '').replace(/^\+/, '');
      if (UNIT_AFTER.test(after) || COUNT_AFTER.test(after)) continue;
      problems.push(`${match[0]} in: ${line}`);
    }
  }
  return problems;
}
