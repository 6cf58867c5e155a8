// Types of report-links.js for the tests; the browser loads the .js alone.

export function comparePath(firstId: string, secondId: string): string;
export function markersOffer(report: { format?: { container?: string } }): { offered: boolean; reason: string | null };
export function lineageCompareLinks(job: {
  id: string;
  rerunOf?: string;
  reruns?: string[];
}): { href: string; text: string }[];
export function saveName(fileName: string | null | undefined, jobId: string, suffix: string): string;
