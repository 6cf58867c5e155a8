// Types of dashboard-select.js for the tests; the browser loads the .js alone.
import type { SignOffLike } from './review.js';

export const MAX_JUNIT_JOBS: number;
export function comparePathOf(chosen: { id: string; createdAt: string }[]): string | null;
export function junitPathOf(ids: string[]): string;
export function signOffMarker(signOff: SignOffLike): { word: string; who: string };
