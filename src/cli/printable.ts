// File names go to a terminal in the readable output: escape control and format characters so a
// name cannot move the cursor, inject escapes or forge lines. Ordinary names print unchanged.
export function printableName(name: string): string {
  return name.replace(
    /[\u0000-\u001f\u007f-\u009f\u00ad\u2028\u2029\p{Cf}]/gu,
    (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`,
  );
}
