// Plain-text summary of an analysis document for people at a terminal.
import { printableName } from './printable.ts';
import type { EventKind } from '../analysis/events.ts';
import { DECLARED_FIELD_TITLES } from '../engine/declared-loudness.ts';
import { channelName, type AnalysisDocument } from '../engine/document.ts';

/** A level of digital silence (null) in words, never -inf. */
const fixed = (value: number | null, unit: string, digits = 1) =>
  value === null ? 'none (digital silence)' : `${value.toFixed(digits)} ${unit}`;
const orNone = (value: number | null, unit: string) =>
  value === null ? 'none (below gate)' : `${value.toFixed(1)} ${unit}`;

export function formatTime(seconds: number): string {
  const h = Math.floor(seconds / 3600);
  const m = Math.floor((seconds % 3600) / 60);
  const s = seconds % 60;
  return `${String(h).padStart(2, '0')}:${String(m).padStart(2, '0')}:${s.toFixed(3).padStart(6, '0')}`;
}

/** The unit of each event kind's peakValue (analysis/events.ts); null where the kind has none. */
const EVENT_UNITS: Record<EventKind, string | null> = {
  clipping: 'dBFS',
  dropout: 'dBFS',
  silence: 'dBFS',
  true_peak_over: 'dBTP',
  reconstructed_over: 'dBTP',
  dead_channel: null,
  duplicate_channel: null,
  inverted_channel: null,
  phase_problem: 'correlation',
  loud_short_term: 'LUFS',
  loud_momentary: 'LUFS',
  downmix_clipping: 'dBFS',
};

/** An event's most extreme value with its unit ("loudest 0.98 dBFS"); empty when it has none. */
function eventPeak(kind: EventKind, value: number | undefined): string {
  const unit = EVENT_UNITS[kind];
  if (value === undefined || unit === null) return '';
  return `  ${kind === 'phase_problem' ? 'lowest' : 'peak'} ${value.toFixed(2)} ${unit}`;
}

/** Where the channel roles came from, as the text output says it. */
const LAYOUT_FROM: Record<NonNullable<AnalysisDocument['format']['layoutFrom']>, string> = {
  channel_mask: 'from the channel mask',
  chna: 'from the chna chunk',
  declared: 'as declared',
};

/** `all`: every event the document keeps, not only the first 20. */
export function formatAnalysis(doc: AnalysisDocument, { all = false }: { all?: boolean } = {}): string {
  const f = doc.format;
  const s = doc.summary;
  const lines = [
    `${printableName(doc.file?.name ?? 'stream')}: ${f.container} ${f.encoding}, ${f.sampleRate} Hz, ${f.channels} ch (${f.channelLabels.join(' ')}${f.layoutFrom ? `; ${LAYOUT_FROM[f.layoutFrom]}` : ''})` +
      `${f.bitsPerSample ? `, ${f.bitsPerSample}-bit` : ''}, ${formatTime(f.durationSeconds ?? 0)}`,
    '',
    `  Integrated loudness   ${orNone(s.integratedLufs, 'LUFS')}${
      s.integratedFromSeconds > 0
        ? ` from ${s.integratedFromSeconds.toFixed(2)} s, after the line-up (whole file ${orNone(s.wholeFileIntegratedLufs, 'LUFS')})`
        : ''
    }`,
    `  Loudness range        ${orNone(s.loudnessRangeLu, 'LU')}`,
    `  Max momentary         ${orNone(s.maxMomentaryLufs, 'LUFS')}`,
    `  Max short-term        ${orNone(s.maxShortTermLufs, 'LUFS')}`,
    `  True peak             ${fixed(s.truePeakDbtp, 'dBTP')} (BS.1770 Annex 2), ${fixed(s.reconstructedPeakDbtp, 'dBTP')} reconstructed`,
    `  Sample peak           ${fixed(s.samplePeakDbfs, 'dBFS')}`,
    `  RMS (all channels)    ${fixed(s.rmsDbfs, 'dBFS')}`,
    `  Head / tail silence   ${s.headSilenceSeconds.toFixed(2)} s / ${s.tailSilenceSeconds.toFixed(2)} s`,
    ...declaredLines(doc),
    '',
    '  ch  label  peak dBFS  TP dBTP   RMS dBFS  crest dB  DC of FS    clip runs  dropouts',
    ...doc.channels.map(
      (c) =>
        `  ${String(c.index + 1).padEnd(3)} ${c.label.padEnd(6)} ${num(c.samplePeakDbfs)} ${num(c.truePeakDbtp)} ${num(c.rmsDbfs)} ${num(c.crestFactorDb)} ${c.dcOffset.toExponential(2).padStart(10)}  ${String(c.clippingRuns).padStart(9)}  ${String(c.dropouts).padStart(8)}${c.dead ? '  (dead)' : ''}`,
    ),
  ];
  lines.push(...downmixLines(doc), ...dialogueLines(doc));
  if (!doc.integrity.intact)
    lines.unshift(...doc.integrity.problems.map((p) => `DAMAGED at ${formatTime(p.atSeconds)}: ${p.message}`));
  const counts = Object.entries(doc.eventCounts);
  lines.push(
    '',
    counts.length === 0
      ? '  No events.'
      : `  Events: ${counts.map(([k, n]) => `${k} ${n}`).join(', ')}${doc.eventsTruncated ? ' (list truncated)' : ''}`,
  );
  const shown = all ? doc.events.length : 20;
  for (const e of doc.events.slice(0, shown)) {
    lines.push(
      `    ${formatTime(e.startSeconds)} - ${formatTime(e.endSeconds)}  ${e.kind}  ch ${channelName(doc, e.channel)}${e.otherChannel !== undefined ? ` / ${channelName(doc, e.otherChannel)}` : ''}${eventPeak(e.kind, e.peakValue)}`,
    );
  }
  if (doc.events.length > shown) lines.push(`    ... ${doc.events.length - shown} more (--all lists them)`);
  for (const w of doc.warnings) lines.push(`  warning ${w.code}: ${w.message}`);
  return `${lines.join('\n')}\n`;
}

/** What the file's metadata declares beside our reading, one line per source (bext v2, iXML). */
function declaredLines(doc: AnalysisDocument): string[] {
  return doc.declaredLoudness.map(({ source, rows }) => {
    const figures = rows.map(
      (r) =>
        `${DECLARED_FIELD_TITLES[r.field].toLowerCase()} declared ${r.declared.toFixed(2)} ${r.unit}, measured ${r.measured === null ? 'none' : r.measured.toFixed(1)} ${r.unit}`,
    );
    return `  Declared (${source === 'bext' ? 'bext' : 'iXML'})`.padEnd(24) + figures.join('; ');
  });
}

/** The fold-down readings, when the analysis was asked for them (`--downmix`). */
function downmixLines(doc: AnalysisDocument): string[] {
  const d = doc.downmix;
  if (!d.measured) return [];
  const lines = [''];
  if (d.loRo)
    lines.push(
      `  Downmix Lo/Ro         ${orNone(d.loRo.integratedLufs, 'LUFS')}, true peak ${fixed(d.loRo.truePeakDbtp, 'dBTP')}, ${d.loRo.clipRuns} clip runs`,
    );
  if (d.mono)
    lines.push(
      d.mono.cancels
        ? '  Mono sum L + R        cancels to silence (R is L inverted)'
        : `  Mono sum L + R        ${orNone(d.mono.integratedLufs, 'LUFS')}, loss ${orNone(d.mono.compatibilityLossLu, 'LU')}`,
    );
  if (d.note) lines.push(`  Downmix               ${d.note}`);
  if (d.channelIntegratedLufs)
    lines.push(
      `  Each channel alone    ${d.channelIntegratedLufs.map((l, c) => `ch ${channelName(doc, c)} ${orNone(l, 'LUFS')}`).join(', ')} (not summable)`,
    );
  return lines;
}

/** The dialogue reading, when the analysis ran the speech detector (`--dialogue`). */
function dialogueLines(doc: AnalysisDocument): string[] {
  const d = doc.dialogue;
  if (!d.measured) return [];
  const share = `speech in ${(d.speechSharePercent ?? 0).toFixed(1)} % of the programme`;
  if (d.dialogueLufs === null) return ['', `  Dialogue              not measurable: ${d.note ?? share}`];
  return [
    '',
    `  Dialogue              ${d.dialogueLufs.toFixed(1)} LUFS (${share}; detector ${d.detector})`,
    `  Loudness to dialogue  ${orNone(d.loudnessToDialogueLu, 'LU')} (programme minus dialogue)`,
  ];
}

function num(value: number | null): string {
  return (value === null ? 'silent' : value.toFixed(2)).padStart(9);
}
