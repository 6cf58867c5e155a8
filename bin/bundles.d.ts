// Types of bundles.js for the TypeScript side (the worker forks the bundled analysis child).
export const ROOT: string;
export const DIST: string;
export const ENTRIES: Record<string, string>;
/** file: URL of dist/<name>.mjs when it exists and is newer than every source file; else null. */
export function currentBundle(name: string): string | null;
