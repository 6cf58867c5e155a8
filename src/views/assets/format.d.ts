// Types of format.js for the server (plot labels) and the tests; the browser loads the .js alone.

export type FlagSeverity = 'fail' | 'warn' | 'remark';

/** The flag fields the wording reads (report v2; v1 names accepted by flagView). */
export interface FlagLike {
  number: number;
  kind: string;
  title: string;
  severity: FlagSeverity;
  channelName: string;
  otherChannelName?: string;
  startTimecode: string;
  endTimecode: string;
  worstValue: number | null;
  unit: string | null;
  count: number;
  message: string;
}

export function flagView<T extends object>(flag: T, index: number): T & FlagLike;
export function worstValueText(flag: Pick<FlagLike, 'worstValue' | 'unit'>): string | null;
export function channelText(flag: Pick<FlagLike, 'channelName' | 'otherChannelName'>): string;
export function spanText(flag: Pick<FlagLike, 'startTimecode' | 'endTimecode'>): string;
export function countText(flag: Pick<FlagLike, 'count'>): string | null;
export function flagDetails(flag: FlagLike): string[];
export function flagLabel(flag: FlagLike): string;
export function flagCountsText(report: {
  flagCounts?: Partial<Record<FlagSeverity, number>>;
  flags: ReadonlyArray<{ severity: string }>;
}): string;
export function unlistedText(report: {
  unlistedEvents?: ReadonlyArray<{ kind: string; ruleId: string | null; severity: FlagSeverity; count: number }>;
}): string;
export function headlineNamesVerdict(headline: string, verdict: string | null): boolean;
export function outcomeText(check: { outcome: string; passed: boolean }): string;
export const FAILURE_HINTS: Record<string, string>;
export function failureHint(code: string): string;
export function dateTimeText(iso: string | null | undefined): string;
export function stateCounts(items: ReadonlyArray<{ state: string }>): {
  shown: number;
  queued: number;
  active: number;
  completed: number;
  failed: number;
};
