// File names go into error messages that end up on terminals and in logs: quote them and escape
// control, format (bidi) and line-separator characters so a name cannot forge lines or escapes.

/** `path` as a quoted, escaped string safe to print anywhere. */
export function safeName(path: string): string {
  return JSON.stringify(path).replace(
    /[\u007f-\u009f\u00ad\u2028\u2029\p{Cf}]/gu,
    (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`,
  );
}
