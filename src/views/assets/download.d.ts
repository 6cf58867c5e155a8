// Types of download.js for the tests; the browser loads the .js alone.

export function fileNameFromDisposition(header: string | null | undefined, fallback: string): string;
export function sizeText(bytes: number): string;
export function progressText(receivedBytes: number, totalBytes: number): string;
export function saveDownload(
  path: string,
  fallbackName: string,
  onProgress?: (text: string) => void,
): Promise<{ fileName: string; sizeBytes: number }>;
