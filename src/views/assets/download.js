// Saves an API answer as a file. The API wants the key in a header, which a plain link cannot
// send, so the answer is fetched with the key, streamed into a Blob (the chunks are let go as the
// Blob takes them) and handed to the browser's save through a short-lived object URL, named as
// the server's content-disposition says.
import { api } from './common.js';

/** The file name of a content-disposition header (filename*=UTF-8'' or filename=), or the fallback. */
export function fileNameFromDisposition(header, fallback) {
  if (!header) return fallback;
  const extended = /filename\*\s*=\s*UTF-8''([^;]+)/i.exec(header);
  let name = null;
  if (extended) {
    try {
      name = decodeURIComponent(extended[1].trim());
    } catch {
      name = null;
    }
  }
  if (!name) {
    const plain = /filename\s*=\s*(?:"([^"]*)"|([^;\s]+))/i.exec(header);
    name = plain ? (plain[1] ?? plain[2]) : null;
  }
  // Never a path: the last segment, no control characters.
  const safe = (name ?? '')
    .split(/[\\/]/)
    .pop()
    .replace(/[\u0000-\u001f\u007f]/g, '')
    .trim();
  return safe || fallback;
}

/** Decimal sizes (1 MB = 1,000,000 bytes), as file managers commonly show them. */
export function sizeText(bytes) {
  if (bytes >= 1e9) return `${(bytes / 1e9).toFixed(2)} GB`;
  if (bytes >= 1e6) return `${(bytes / 1e6).toFixed(1)} MB`;
  return `${Math.max(1, Math.round(bytes / 1e3))} kB`;
}

/** "Preparing… 12.3 MB of 40.0 MB (31 %)", or without the total when the server gave none. */
export function progressText(receivedBytes, totalBytes) {
  if (!totalBytes) return `Preparing… ${sizeText(receivedBytes)}`;
  const percent = Math.min(100, Math.floor((receivedBytes / totalBytes) * 100));
  return `Preparing… ${sizeText(receivedBytes)} of ${sizeText(totalBytes)} (${percent} %)`;
}

/**
 * Fetches `path` with the key and saves it. onProgress(text) hears the progress; resolves with
 * { fileName, sizeBytes } once the browser has been handed the file.
 */
export async function saveDownload(path, fallbackName, onProgress = () => undefined) {
  onProgress('Preparing…');
  const response = await api(path);
  const fileName = fileNameFromDisposition(response.headers.get('content-disposition'), fallbackName);
  const totalBytes = Number(response.headers.get('content-length')) || 0;
  const type = response.headers.get('content-type') ?? 'application/octet-stream';
  let blob;
  if (response.body) {
    const reader = response.body.getReader();
    let parts = [];
    let pending = [];
    let receivedBytes = 0;
    for (;;) {
      const { done, value } = await reader.read();
      if (done) break;
      pending.push(value);
      receivedBytes += value.byteLength;
      // Small reads folded into Blobs as they come, so no long array of typed arrays piles up.
      if (pending.length >= 64) {
        parts.push(new Blob(pending));
        pending = [];
      }
      onProgress(progressText(receivedBytes, totalBytes));
    }
    blob = new Blob([...parts, ...pending], { type });
    parts = [];
    pending = [];
  } else blob = await response.blob();
  const url = URL.createObjectURL(blob);
  const link = document.createElement('a');
  link.href = url;
  link.download = fileName;
  link.hidden = true;
  document.body.append(link);
  link.click();
  link.remove();
  // The browser has taken its own reference by now; release ours soon after.
  setTimeout(() => URL.revokeObjectURL(url), 1000);
  return { fileName, sizeBytes: blob.size };
}
