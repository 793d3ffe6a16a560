#!/usr/bin/env node
// Runs a TypeScript entry point through tsx's loader (no build step needed).
import { register } from 'tsx/esm/api';
import { pathToFileURL } from 'node:url';
import path from 'node:path';

register();
const [entry, ...rest] = process.argv.slice(2);
if (!entry) {
  process.stderr.write('usage: run-ts.mjs FILE.ts [args]\n');
  process.exit(2);
}
process.argv = [process.argv[0], entry, ...rest];
await import(pathToFileURL(path.resolve(entry)).href);
