// Types of dialogue.js for the tests; the browser loads the .js alone.
import type { QcReport } from '../../profiles/index.ts';

export function dialogueRows(dialogue: QcReport['dialogue'] | undefined): [string, string][];
export function renderDialogue(report: QcReport): void;
