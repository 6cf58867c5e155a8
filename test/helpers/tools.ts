// The cross-check tools (ffmpeg, sox, chromium; espeak-ng speaks the dialogue corpus) are optional
// on a developer machine, where their tests skip. Under CI=true a missing one fails the run
// instead: a skipped cross-check must not look like a passed one.

import { accessSync, constants } from 'node:fs';
import { delimiter, join } from 'node:path';

export type Tool = 'ffmpeg' | 'ffprobe' | 'sox' | 'chromium' | 'espeak-ng';

// The Debian package that provides each tool.
const PACKAGE: Record<Tool, string> = {
  ffmpeg: 'ffmpeg',
  ffprobe: 'ffmpeg',
  sox: 'sox',
  chromium: 'chromium',
  'espeak-ng': 'espeak-ng',
};

/** The tool's executable on PATH, or null. */
export function toolPath(tool: Tool): string | null {
  for (const dir of (process.env.PATH ?? '').split(delimiter)) {
    if (!dir) continue;
    const candidate = join(dir, tool);
    try {
      accessSync(candidate, constants.X_OK);
      return candidate;
    } catch {
      // Not in this directory; try the next.
    }
  }
  return null;
}

/** For skipIf/runIf: true when the tool is on PATH; when it is not, false, or under CI=true an error. */
export function hasTool(tool: Tool): boolean {
  if (toolPath(tool) !== null) return true;
  if (process.env.CI === 'true') {
    throw new Error(
      `${tool} is not on PATH; under CI=true its cross-check tests must run: apt-get install -y ${PACKAGE[tool]}`,
    );
  }
  return false;
}
