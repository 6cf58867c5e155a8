// Types of review.js for the tests; the browser loads the .js alone.

export interface SignOffLike {
  number: number;
  decision: 'accept' | 'reject';
  note: string | null;
  verdict: 'warn' | 'fail';
  by: { tenant: string; keyId: string; operator: string | null };
  at: string;
}

export function signOffText(signOff: SignOffLike): string;
export function versionOptions(entry: {
  profile: { version: string };
  builtin: boolean;
  versions: number;
}): { value: string; label: string }[];
