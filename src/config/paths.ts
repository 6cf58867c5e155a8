// Files shipped beside the code (openapi/*.json), found from the project root so the same code
// works from the TypeScript sources (src/...) and from the bundles in dist/ (bin/build.js).
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

function findRoot(from: string): string {
  for (let dir = dirname(from); ; dir = dirname(dir)) {
    if (existsSync(join(dir, 'package.json')) && existsSync(join(dir, 'openapi'))) return dir;
    if (dirname(dir) === dir) throw new Error(`no project root above ${from}`);
  }
}

export const PROJECT_ROOT = findRoot(fileURLToPath(import.meta.url));

/** file: URL of a path relative to the project root, e.g. 'openapi/profile.schema.json'. */
export function projectFileUrl(relative: string): URL {
  return pathToFileURL(join(PROJECT_ROOT, relative));
}
