// Pure wording for the pages: no DOM, no fetch, so the server's plot labels and the unit tests
// use the very same text as the browser.

const words = (kind) => String(kind).replace(/_/g, ' ');
const capitalised = (text) => text.charAt(0).toUpperCase() + text.slice(1);

/**
 * A flag with the report-v2 fields, also from a v1 report still within its retention period
 * (peakValue, mergedEvents, no number, title or channel name).
 */
export function flagView(flag, index) {
  const channelName =
    flag.channelName ?? (flag.channel === null || flag.channel === undefined ? 'all' : String(flag.channel + 1));
  const otherChannelName =
    flag.otherChannelName ?? (flag.otherChannel === undefined ? undefined : String(flag.otherChannel + 1));
  return {
    ...flag,
    number: flag.number ?? index + 1,
    title: flag.title ?? capitalised(words(flag.kind)),
    channelName,
    ...(otherChannelName === undefined ? {} : { otherChannelName }),
    worstValue: flag.worstValue !== undefined ? flag.worstValue : (flag.peakValue ?? null),
    unit: flag.unit ?? null,
    count: flag.count ?? flag.mergedEvents ?? 1,
    message: flag.message ?? '',
  };
}

/** Level-like units read to 0.1; correlations and other ratios need two decimals. */
const ONE_DECIMAL = new Set(['dBTP', 'dBFS', 'dB', 'LUFS', 'LU', 's']);

export function worstValueText(flag) {
  if (flag.worstValue === null || flag.worstValue === undefined || !Number.isFinite(flag.worstValue)) return null;
  const digits = ONE_DECIMAL.has(flag.unit) ? 1 : 2;
  // -0.001 reads "0.0", as in the report's own messages, not "-0.0".
  const value = flag.worstValue.toFixed(digits).replace(/^-(0\.0+)$/, '$1');
  return `${value}${flag.unit ? ` ${flag.unit}` : ''}`;
}

export function channelText(flag) {
  if (flag.channelName === 'all') return 'all channels';
  return flag.otherChannelName ? `ch ${flag.channelName} with ${flag.otherChannelName}` : `ch ${flag.channelName}`;
}

export function spanText(flag) {
  return flag.endTimecode && flag.endTimecode !== flag.startTimecode
    ? `${flag.startTimecode} – ${flag.endTimecode}`
    : flag.startTimecode;
}

/** "× 37" when the flag merges several events; nothing for one. */
export function countText(flag) {
  return flag.count > 1 ? `× ${flag.count}` : null;
}

/** The facts after the title, in reading order: where, which channel, how many, how bad. */
export function flagDetails(flag) {
  const worst = worstValueText(flag);
  return [spanText(flag), channelText(flag), countText(flag), worst ? `worst ${worst}` : null].filter(Boolean);
}

/** One line for a plot marker's title or a screen reader: "#12 Clipping run (fail), 00:… – 00:…, ch 2 R, × 37, worst -0.1 dBTP". */
export function flagLabel(flag) {
  return [`#${flag.number} ${flag.title} (${flag.severity})`, ...flagDetails(flag)].join(', ');
}

/** The headline names its verdict ("FAIL: …") unless it is older or hand-made: only then add a badge. */
export function headlineNamesVerdict(headline, verdict) {
  return Boolean(verdict) && headline.toLowerCase().startsWith(String(verdict).toLowerCase());
}

function countBySeverity(flags) {
  const counts = {};
  for (const f of flags) counts[f.severity] = (counts[f.severity] ?? 0) + 1;
  return counts;
}

const plural = (n, one, many) => `${n} ${n === 1 ? one : many}`;

/** "3 fail · 1 warn · 12 remarks"; from the flags themselves when a v1 report has no counts. */
export function flagCountsText(report) {
  const counts = report.flagCounts ?? countBySeverity(report.flags);
  return `${counts.fail ?? 0} fail · ${counts.warn ?? 0} warn · ${plural(counts.remark ?? 0, 'remark', 'remarks')}`;
}

/**
 * The analysis's events past its event cap: counted by kind, never listed or merged into flags.
 * "" when none. Says how many and of which kind, and that the flag count leaves them out.
 */
export function unlistedText(report) {
  const unlisted = report.unlistedEvents ?? [];
  if (unlisted.length === 0) return '';
  const total = unlisted.reduce((sum, u) => sum + u.count, 0);
  const kinds = unlisted
    .map((u) => `${words(u.kind)} ${u.count}${u.ruleId ? ` (${u.ruleId}, ${u.severity})` : ` (${u.severity})`}`)
    .join(', ');
  return `Listing cut: ${plural(total, 'more detection', 'more detections')} past the analysis's event cap, not listed and not merged into the flags counted here: ${kinds}. The checks count them all.`;
}

/** A check's outcome for people; marginal is its own word (it counts as a warn), never "not met". */
export function outcomeText(check) {
  if (check.outcome === 'marginal') return 'marginal';
  if (check.outcome === 'not_measurable') return check.passed ? 'met (not measurable)' : 'not measurable';
  return check.passed ? 'met' : 'not met';
}

/** What to do about each catalogue code (src/errors/index.ts) a job can fail with: the one table the page reads. */
export const FAILURE_HINTS = {
  empty_file: 'The file has no bytes. Export it again and submit the new file.',
  unsupported_format:
    'Re-export the audio as WAV or FLAC and submit it again. Also read: RF64, BW64, AIFF, AIFF-C, MP3, AAC, M4A, Ogg Vorbis, Ogg Opus, WebM and CAF.',
  unsupported_encoding:
    'Re-export as PCM WAV (8 to 32-bit integer, or 32/64-bit float), AIFF, or FLAC, and submit it again.',
  corrupt_file: 'The file is damaged or inconsistent. Export it again from the source and resubmit.',
  decoded_size_exceeded:
    "The decoded audio is over this service's size cap. Send a shorter file, split it, or send a WAV or FLAC export.",
  file_not_found: 'The stored upload is gone (its retention period may be over). Submit the file again.',
  layout_mismatch:
    "The profile declares a channel layout with another channel count, and the file does not name its channels. Use a profile for the file's layout, or export it with a channel mask.",
  payload_too_large: 'The file is over the size limit. Send a smaller file or split it.',
  invalid_profile: 'The profile is not valid. Fix it (see GET /v1/profiles) and submit again.',
  unknown_profile: 'No profile has this id. Choose one listed by GET /v1/profiles.',
  invalid_argument: 'The request was not valid for this worker. Submit the job again.',
  source_refused: 'The URL is not allowed: use an http(s) URL on a permitted public host, not an internal address.',
  source_fetch_failed:
    'Check the URL: open it yourself and see that it answers with the file (not a login or error page), then submit again.',
  source_stalled:
    'The URL stopped sending the file. Check that its server is up and the link has not expired, then submit again.',
  cancelled: 'The job was cancelled before it finished. Submit it again if you still need the report.',
  storage_full: 'The service ran out of storage. Submit again later, or tell the operator.',
  storage_unavailable: "The service's storage was not available. Submit again later, or tell the operator.",
  service_unavailable: 'A part of the service was not available. Submit again later.',
  speech_model_unavailable:
    "The speech detector that the profile's dialogue reading needs could not be loaded. Use a profile without a dialogue rule, or tell the operator.",
  internal_error: 'Submit the file again. If it fails again, tell the operator this job id and error code.',
};

/** What to do about a failed job, in plain words. */
export function failureHint(code) {
  return Object.hasOwn(FAILURE_HINTS, code) ? FAILURE_HINTS[code] : FAILURE_HINTS.internal_error;
}

const pad2 = (n) => String(n).padStart(2, '0');

/**
 * A timestamp as YYYY-MM-DD HH:MM:SS in the viewer's time zone: date first and 24-hour, so no
 * locale reads it two ways (the page's column header names the zone).
 */
export function dateTimeText(iso) {
  if (!iso) return '–';
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return '–';
  const date = `${d.getFullYear()}-${pad2(d.getMonth() + 1)}-${pad2(d.getDate())}`;
  return `${date} ${pad2(d.getHours())}:${pad2(d.getMinutes())}:${pad2(d.getSeconds())}`;
}

/** The list's rows counted by state, so the counters beside the table match it row for row. */
export function stateCounts(items) {
  const counts = { queued: 0, active: 0, completed: 0, failed: 0 };
  for (const item of items) if (Object.hasOwn(counts, item.state)) counts[item.state] += 1;
  return { shown: items.length, ...counts };
}
