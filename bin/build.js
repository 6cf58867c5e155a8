#!/usr/bin/env node
// `npm run build`: bundles the CLI, the analysis and excerpt threads, the service's and the batch check's
// children and the benchmark child into dist/*.mjs
// (`node bin/build.js <folder>` for another folder). Packages stay external: node_modules is
// resolved at run time as usual. npm runs it as `prepare` after `npm ci` and `npm install`, so the
// `earmark` command starts from the bundles on a fresh install (esbuild is a runtime dependency);
// there `--if-stale` skips the build when dist/ is current (npx links the project and prepares it
// again on its first run).
import { build } from 'esbuild';
import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { currentBundle, DIST, ENTRIES, ROOT } from './bundles.js';

const args = process.argv.slice(2);
const folder = args.find((arg) => !arg.startsWith('--'));
const outdir = folder ? resolve(folder) : DIST;
// The image ships without bench/: bundle what is there.
// The excerpt and package-set threads are started by path from whatever bundle holds their runner.
const entries = Object.entries({
  ...ENTRIES,
  'excerpt-thread': 'src/engine/excerpt-thread.ts',
  'package-set-thread': 'src/worker/package-set-thread.ts',
}).filter(([, source]) => existsSync(join(ROOT, source)));
// An install without the sources (a dependencies-only stage) has nothing to bundle.
if (entries.length === 0) {
  console.log('no sources to bundle');
  process.exit(0);
}
if (args.includes('--if-stale') && outdir === DIST && entries.every(([name]) => currentBundle(name) !== null)) {
  console.log(`bundles in ${outdir} are current`);
  process.exit(0);
}
await build({
  entryPoints: Object.fromEntries(entries.map(([name, source]) => [name, join(ROOT, source)])),
  outdir,
  outExtension: { '.js': '.mjs' },
  bundle: true,
  platform: 'node',
  format: 'esm',
  target: 'node20',
  packages: 'external',
  sourcemap: 'linked',
  logLevel: 'warning',
});
console.log(`bundled ${entries.map(([name]) => name).join(', ')} into ${outdir}`);
