// Types of channels.js for the tests; the browser loads the .js alone.
import type { ChannelSummary } from '../../engine/document.ts';

export interface ChannelReport {
  channels?: readonly Partial<ChannelSummary>[];
  downmix?: { channelIntegratedLufs: (number | null)[] | null } | null;
  summary?: { allChannelDropouts?: number };
}

export function channelTable(report: ChannelReport): {
  columns: string[];
  rows: { name: string; silent: boolean; values: string[] }[];
};
export function channelNote(report: ChannelReport): string;
export function renderChannels(report: ChannelReport): void;
