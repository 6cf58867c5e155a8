// The dialogue rules on an analysed tone whose dialogue reading is then set by hand: the rules
// judge the document, so each reading (measured, share, loudness) is put exactly where a limit is.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { AnalysisDocument } from '../../src/engine/document.ts';
import { analyzeFile } from '../../src/engine/analyze-file.ts';
import { analysisOptionsForProfile, evaluate, parseProfile } from '../../src/profiles/index.ts';
import { builtinProfile } from '../../src/profiles/index.ts';
import { tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
let base: AnalysisDocument;
beforeAll(async () => {
  // A -20 dBFS stereo 1 kHz tone reads -20.0 LUFS (EBU Tech 3341 V4 Table 1 case 1).
  base = await analyzeFile(await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -20 }] }));
});
afterAll(cleanup);

const profileJson = (rules: unknown[]) => ({
  id: 'dialogue-test',
  name: 'Dialogue test',
  version: '1.0.0',
  description: 'Dialogue rules only',
  basis: 'house rule',
  rules,
});

/** The base document with a dialogue reading: share in percent, dialogue loudness (null: not measurable). */
function withDialogue(sharePercent: number | null, dialogueLufs: number | null): AnalysisDocument {
  const programme = base.summary.integratedLufs;
  return {
    ...base,
    dialogue: {
      ...base.dialogue,
      measured: sharePercent !== null,
      detector: sharePercent !== null ? 'test' : null,
      speechSharePercent: sharePercent,
      minimumSharePercent: 10,
      measurable: dialogueLufs !== null,
      dialogueLufs,
      loudnessToDialogueLu: dialogueLufs !== null && programme !== null ? programme - dialogueLufs : null,
      speechBlocks: 0,
      programmeBlocks: 0,
      note: null,
    },
  };
}

const checkOn = (rules: unknown[], doc: AnalysisDocument, id: string) => {
  const report = evaluate(parseProfile(profileJson(rules)), doc);
  const found = report.checks.find((c) => c.ruleId === id);
  if (!found) throw new Error(`no check ${id}`);
  return found;
};

describe('dialogue rules', () => {
  const dialogue = { id: 'dlg', type: 'dialogue-loudness', severity: 'fail', targetLufs: -24, toleranceLu: 2 };

  it('ask the analysis for the speech detector, with the lowest share a rule accepts', () => {
    const options = analysisOptionsForProfile(
      parseProfile(
        profileJson([
          { ...dialogue, minSpeechSharePercent: 30 },
          {
            id: 'anchor',
            type: 'integrated-loudness',
            severity: 'fail',
            targetLufs: -23,
            toleranceLu: 1,
            dialogueAnchor: { minSpeechSharePercent: 20 },
          },
        ]),
      ),
    );
    expect(options.speech).toEqual({ enabled: true, minimumSharePercent: 20 });
    const plain = parseProfile(profileJson([{ id: 'tp', type: 'true-peak', severity: 'fail', maxDbtp: -1 }]));
    expect(analysisOptionsForProfile(plain).speech).toBeUndefined();
  });

  it('dialogue loudness: inside and outside the target and tolerance', () => {
    expect(checkOn([dialogue], withDialogue(60, -25.9), 'dlg').passed).toBe(true);
    const low = checkOn([dialogue], withDialogue(60, -26.1), 'dlg');
    expect(low.passed).toBe(false);
    expect(low.explanation).toContain('below');
    expect(low.explanation).toContain('speech in 60.0 %');
  });

  it('dialogue loudness: under the speech share it is not applied, or fails when dialogue is required', () => {
    const absent = checkOn([dialogue], withDialogue(5, null), 'dlg');
    expect(absent.outcome).toBe('not_measurable');
    expect(absent.passed).toBe(true);
    expect(absent.explanation).toContain('5.0 %');
    const required = checkOn([{ ...dialogue, requireDialogue: true }], withDialogue(5, null), 'dlg');
    expect(required.passed).toBe(false);
    // A rule's own higher minimum: the document has a reading at 15 %, the rule wants 30 %.
    expect(checkOn([{ ...dialogue, minSpeechSharePercent: 30 }], withDialogue(15, -24), 'dlg').outcome).toBe(
      'not_measurable',
    );
  });

  it('a document without the detector run fails every dialogue rule: nothing can be said', () => {
    const doc = withDialogue(null, null);
    expect(checkOn([dialogue], doc, 'dlg').passed).toBe(false);
    expect(checkOn([{ id: 's', type: 'speech-share', severity: 'fail', minPercent: 10 }], doc, 's').passed).toBe(false);
  });

  it('speech share and loudness-to-dialogue ratio (programme minus dialogue, EBU R 128 s4)', () => {
    const share = { id: 's', type: 'speech-share', severity: 'warn', minPercent: 40 };
    expect(checkOn([share], withDialogue(40, -24), 's').passed).toBe(true);
    expect(checkOn([share], withDialogue(39.9, -24), 's').passed).toBe(false);
    const ldr = { id: 'ldr', type: 'loudness-to-dialogue', severity: 'fail', maxLu: 3 };
    // Programme -20.0 LUFS: dialogue at -23.05 gives 3.05 LU, over; at -22.95, 2.95 LU.
    const over = checkOn([ldr], withDialogue(50, -23.05), 'ldr');
    expect(over.passed).toBe(false);
    expect(over.measured).toBeCloseTo(3.05, 1);
    expect(checkOn([ldr], withDialogue(50, -22.95), 'ldr').passed).toBe(true);
    expect(checkOn([ldr], withDialogue(5, null), 'ldr').outcome).toBe('not_measurable');
  });

  it('the dialogue anchor judges dialogue with its own tolerance when speech fills enough of the programme', () => {
    const rule = {
      id: 'anchor',
      type: 'integrated-loudness',
      severity: 'fail',
      targetLufs: -18,
      toleranceLu: 2,
      dialogueAnchor: { minSpeechSharePercent: 10, toleranceLu: 1 },
    };
    // Programme -20.0 LUFS: inside -18 +/-2. Dialogue -19.5: outside -18 +/-1.
    const anchored = checkOn([rule], withDialogue(50, -19.5), 'anchor');
    expect(anchored.passed).toBe(false);
    expect(anchored.measured).toBe(-19.5);
    expect(anchored.explanation).toContain('anchored on dialogue');
    const programme = checkOn([rule], withDialogue(8, null), 'anchor');
    expect(programme.passed).toBe(true);
    expect(programme.measured).toBeCloseTo(-20, 1);
    expect(programme.explanation).toContain('anchored on the programme');
  });

  it('refuses an anchor whose limits do not fit the rule, and a speech-share rule with no limit', () => {
    expect(() =>
      parseProfile(
        profileJson([
          {
            id: 'a',
            type: 'integrated-loudness',
            severity: 'fail',
            targetLufs: -18,
            toleranceLu: 2,
            dialogueAnchor: { minSpeechSharePercent: 10, maxLufs: -17 },
          },
        ]),
      ),
    ).toThrow(/dialogueAnchor/);
    expect(() => parseProfile(profileJson([{ id: 's', type: 'speech-share', severity: 'fail' }]))).toThrow(
      /minPercent/,
    );
  });

  it('the built-in dialogue-anchored streaming profile asks for the detector', () => {
    expect(analysisOptionsForProfile(builtinProfile('streaming-dialogue-anchored')).speech?.enabled).toBe(true);
  });
});
