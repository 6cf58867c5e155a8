#!/usr/bin/env node
// The `earmark` command: the bundle from `npm run build` when it is current, else the TypeScript
// sources through tsx's loader, so `npx earmark` works right after `npm ci` too.
import { currentBundle } from './bundles.js';

const bundle = currentBundle('earmark');
if (bundle) {
  await import(bundle);
} else {
  const { register } = await import('tsx/esm/api');
  register();
  const { main } = await import('../src/cli/main.ts');
  process.exitCode = await main(process.argv.slice(2));
}
