#!/usr/bin/env node
// Runs any TypeScript entrypoint (bench, fuzz, workers) through tsx: `node bin/run.js path/to/file.ts args...`.
import { register } from 'tsx/esm/api';
import { pathToFileURL } from 'node:url';
import { resolve } from 'node:path';

register();
const [entry, ...rest] = process.argv.slice(2);
process.argv = [process.argv[0], resolve(entry), ...rest];
await import(pathToFileURL(resolve(entry)).href);
