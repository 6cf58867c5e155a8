// From a QC report to the plot's input: curves, the profile's target band and short-term
// limit, and one marker per flag, with the time axis in the report's own timecode.

import { FRAME_RATES, timecodeAtSample, type QcReport } from '../profiles/index.ts';
import { flagLabel, flagView } from './assets/format.js';
import { renderLoudnessPlot, type PlotInput } from './loudness-plot.ts';

function targetBand(report: QcReport): PlotInput['targetBand'] {
  const check = report.checks.find((c) => c.type === 'integrated-loudness');
  if (!check) return undefined;
  const { targetLufs, toleranceLu, min, max } = check.limit;
  if (targetLufs !== undefined && toleranceLu !== undefined)
    return { lowLufs: targetLufs - toleranceLu, highLufs: targetLufs + toleranceLu, targetLufs };
  if (min !== undefined && max !== undefined)
    return { lowLufs: min, highLufs: max, ...(targetLufs !== undefined ? { targetLufs } : {}) };
  return undefined;
}

export function plotInputFor(report: QcReport, widthPx = 960, heightPx = 320): PlotInput {
  const rate = FRAME_RATES[report.timecode.frameRate];
  const sampleRate = report.format.sampleRate;
  const shortTermLimit = report.checks.find((c) => c.type === 'short-term-max')?.limit.max;
  return {
    durationSeconds: report.format.durationSeconds ?? report.format.framesDecoded / sampleRate,
    momentary: report.series.momentary,
    shortTerm: report.series.shortTerm,
    targetBand: targetBand(report),
    ...(shortTermLimit !== undefined ? { shortTermLimitLufs: shortTermLimit } : {}),
    ...(report.series.speech ? { speech: report.series.speech } : {}),
    ...(typeof report.dialogue?.dialogueLufs === 'number' ? { dialogueLufs: report.dialogue.dialogueLufs } : {}),
    // Same words as the page's flag list (format.js), so a marker's title matches its list entry.
    flags: report.flags.map((raw, index) => {
      const flag = flagView(raw, index);
      return {
        kind: flag.kind,
        title: flag.title,
        severity: flag.severity,
        startSeconds: flag.startSeconds,
        endSeconds: flag.endSeconds,
        label: flagLabel(flag),
      };
    }),
    formatTime: (seconds) =>
      timecodeAtSample(Math.round(seconds * sampleRate), sampleRate, rate, report.format.timeReferenceSamples),
    widthPx,
    heightPx,
  };
}

export function renderReportPlot(report: QcReport): string {
  return renderLoudnessPlot(plotInputFor(report));
}
