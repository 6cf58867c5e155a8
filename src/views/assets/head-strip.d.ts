// Types of head-strip.js for the tests; the browser loads the .js alone.
import type { QcReport } from '../../profiles/report.ts';

export function hasHead(report: QcReport | null | undefined): boolean;
export function headFacts(report: QcReport): string[];
export function headStripSvg(report: QcReport, widthPx?: number): string;
