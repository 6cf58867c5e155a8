// The report page's dialogue card (src/views/dialogue-section.ts): dialogue-gated loudness,
// the speech share and the loudness-to-dialogue ratio.
import { el, text } from './common.js';

/** [label, value] rows of the dialogue reading; empty when the detector did not run. */
export function dialogueRows(dialogue) {
  if (!dialogue?.measured) return [];
  return [
    ['Dialogue loudness', dialogue.dialogueLufs === null ? 'not measurable' : text(dialogue.dialogueLufs, 1, 'LUFS')],
    ['Speech share', text(dialogue.speechSharePercent, 1, '%')],
    ['Loudness to dialogue', text(dialogue.loudnessToDialogueLu, 1, 'LU')],
    ['Detector', `${dialogue.detector ?? '–'} (${text(dialogue.frameSeconds * 1000, 0, 'ms')} frames)`],
  ];
}

export function renderDialogue(report) {
  const section = document.getElementById('em-dialogue');
  const rows = dialogueRows(report.dialogue);
  if (rows.length === 0) {
    section.hidden = true;
    return;
  }
  document.getElementById('em-dialogue-note').textContent = report.dialogue.note ?? '';
  document
    .getElementById('em-dialogue-metrics')
    .replaceChildren(...rows.map(([label, value]) => el('div', {}, el('dt', {}, label), el('dd', {}, value))));
  section.hidden = false;
}
