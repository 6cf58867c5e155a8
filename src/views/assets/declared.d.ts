// Types of declared.js for the tests; the browser loads the .js alone.

export interface DeclaredRowText {
  source: string;
  quantity: string;
  declared: string;
  measured: string;
  difference: string;
}

interface ReportLike {
  declaredLoudness?: ReadonlyArray<{
    source: string;
    rows: ReadonlyArray<{
      field: string;
      unit: string;
      declared: number;
      measured: number | null;
      measuredMinusDeclared: number | null;
    }>;
  }>;
  flags?: ReadonlyArray<{ kind: string; number: number }>;
}

export function declaredRows(report: ReportLike): DeclaredRowText[];
export function declaredFlagNumbers(report: ReportLike): string[];
export function renderDeclaredLoudness(report: ReportLike): void;
