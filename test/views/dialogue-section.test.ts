// The report page's dialogue card: the shell in the page, and its rows (pure, no browser).
import { describe, expect, it } from 'vitest';
import type { DialogueReading } from '../../src/analysis/speech/dialogue.ts';
import { dialogueRows } from '../../src/views/assets/dialogue.js';
import { reportPage } from '../../src/views/pages.ts';

const reading: DialogueReading = {
  measured: true,
  detector: 'silero-vad-v5',
  frameSeconds: 0.032,
  threshold: 0.5,
  speechSharePercent: 62.5,
  minimumSharePercent: 10,
  measurable: true,
  dialogueLufs: -24.04,
  loudnessToDialogueLu: 1.96,
  speechBlocks: 250,
  programmeBlocks: 400,
  fromSeconds: 0,
  note: null,
};

describe('dialogue card', () => {
  it('sits in the report page once, hidden until filled', () => {
    const page = reportPage('job-1');
    expect(page.match(/id="em-dialogue"/g)).toHaveLength(1);
    expect(page).toMatch(/<section id="em-dialogue"[^>]* hidden>/);
  });

  it('lists the dialogue loudness, share, ratio and detector; nothing when the detector did not run', () => {
    expect(dialogueRows(reading)).toEqual([
      ['Dialogue loudness', '-24.0 LUFS'],
      ['Speech share', '62.5 %'],
      ['Loudness to dialogue', '2.0 LU'],
      ['Detector', 'silero-vad-v5 (32 ms frames)'],
    ]);
    expect(dialogueRows({ ...reading, dialogueLufs: null, loudnessToDialogueLu: null })[0]).toEqual([
      'Dialogue loudness',
      'not measurable',
    ]);
    expect(dialogueRows({ ...reading, measured: false })).toEqual([]);
  });
});
