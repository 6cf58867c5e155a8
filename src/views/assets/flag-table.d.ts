// Types of flag-table.js for the tests; the browser loads the .js alone.
import type { FlagLike, FlagSeverity } from './format.js';

type Viewed = FlagLike & { kind: string; ruleId: string | null; startSeconds: number; endSeconds: number };

export interface FlagGroup {
  kind: string;
  title: string;
  severity: FlagSeverity;
  members: { flag: Viewed; index: number }[];
  startSeconds: number;
  startTimecode: string;
  endSeconds: number;
  endTimecode: string;
  durationSeconds: number;
  count: number;
  worst: string;
  channels: string;
  rules: string;
}

export function secondsText(seconds: number): string;
export function lengthText(seconds: number): string;
export function worstText(flag: Pick<FlagLike, 'worstValue' | 'unit'> & { kind: string }): string;
export function durationText(flag: { startSeconds: number; endSeconds: number }): string;
export function channelCellText(flag: Pick<FlagLike, 'channelName' | 'otherChannelName'>): string;
export function ruleText(flag: { ruleId: string | null }): string;
export function flagGroups(flags: readonly object[]): FlagGroup[];
export function renderFlagTable(
  report: object,
  actions: { show: (flag: Viewed, index: number) => void; listen: (flag: Viewed) => void },
): void;
