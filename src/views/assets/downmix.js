// The report page's fold-down card (src/views/downmix-section.ts): Lo/Ro downmix readings of a
// surround file, the mono sum of a stereo one, and each channel's own loudness.
import { el, text } from './common.js';

/** [label, value] rows of the fold-down readings; empty when none were measured. */
export function downmixRows(downmix) {
  if (!downmix?.measured) return [];
  const rows = [];
  const lr = downmix.loRo;
  if (lr) {
    const gain = (db) => (db === null ? 'omitted' : text(db, 1, 'dB'));
    rows.push(
      ['Lo/Ro integrated', text(lr.integratedLufs, 1, 'LUFS')],
      ['Lo/Ro true peak', text(lr.truePeakDbtp, 1, 'dBTP')],
      ['Lo/Ro clip runs', `${lr.clipRuns}${lr.clipRuns > 0 ? ` (${lr.clippedSamples} samples)` : ''}`],
      [
        'Downmix gains',
        `C ${gain(lr.gains.centreGainDb)} · surrounds ${gain(lr.gains.surroundGainDb)} · LFE ${gain(lr.gains.lfeGainDb)}`,
      ],
    );
  }
  const mono = downmix.mono;
  if (mono) {
    rows.push(['Mono sum (L + R)', mono.cancels ? 'cancels to silence' : text(mono.integratedLufs, 1, 'LUFS')]);
    rows.push(['Mono loss', mono.cancels ? 'total' : text(mono.compatibilityLossLu, 1, 'LU')]);
  }
  return rows;
}

/** [channel name, reading] per channel, or empty when per-channel loudness was not read. */
export function channelLoudnessRows(report) {
  const readings = report.downmix?.channelIntegratedLufs;
  if (!readings) return [];
  return readings.map((lufs, c) => [
    `${c + 1} ${report.channels[c]?.label ?? 'unknown'}`,
    lufs === null ? 'below the gate' : text(lufs, 1, 'LUFS'),
  ]);
}

export function renderDownmix(report) {
  const section = document.getElementById('em-downmix');
  const rows = downmixRows(report.downmix);
  const channels = channelLoudnessRows(report);
  if (rows.length === 0 && channels.length === 0) {
    section.hidden = true;
    return;
  }
  document.getElementById('em-downmix-note').textContent = report.downmix.note ?? '';
  document
    .getElementById('em-downmix-metrics')
    .replaceChildren(...rows.map(([label, value]) => el('div', {}, el('dt', {}, label), el('dd', {}, value))));
  document
    .getElementById('em-channel-loudness-body')
    .replaceChildren(...channels.map(([name, value]) => el('tr', {}, el('td', {}, name), el('td', {}, value))));
  document.getElementById('em-channel-loudness').hidden = channels.length === 0;
  section.hidden = false;
}
